import { LoadExtremes } from '../chance/load-extremes.js';
import { probabilityFromLog } from '../chance/log-space.js';
import type { Placement } from '../chance/placement.js';
import { emptiestTail, fullestTail } from '../chance/shard-extremes.js';
import { spreadTest } from '../chance/spread.js';

/** Distinct keys per shard, as counted: exact, or an estimate with its standard error. */
export interface KeyCounts {
  /** Distinct keys per shard (an estimate where not exact), indexed like the universe. */
  readonly distinct: Float64Array;
  /** Per shard: true where the count is exact. */
  readonly exact: readonly boolean[];
  /** Relative standard error of an estimated count (1.04 / sqrt(registers)). */
  readonly standardError: number;
}

/** One side of the key placement test: the shard with the most (or fewest) keys for its share. */
export interface KeyExtreme {
  readonly index: number;
  /** Distinct keys counted on it (an estimate when `exact` is false). */
  readonly keys: number;
  readonly exact: boolean;
  /** K p_i: keys random placement puts there on average. */
  readonly expected: number;
  /** keys / expected. */
  readonly relative: number;
  /** Max-statistic p-value: P(max r >= r) (or P(min r <= r)) for K keys placed at random. */
  readonly p: number;
}

export interface KeyPlacementResult {
  /** K, the keys placed (the sum of the per-shard counts, rounded). */
  readonly keys: number;
  readonly fullest: KeyExtreme;
  readonly emptiest: KeyExtreme;
  /** Dispersion index of the key counts against K p (1 under random placement). */
  readonly phi: number;
  /** Its p-value; null when a count is an estimate (the sketch's noise would inflate phi). */
  readonly spreadP: number | null;
  /** How many standard errors an estimated count is moved toward the fair share before it is tested. */
  readonly margin: number;
}

/**
 * How many standard errors of the sketch an estimated count is moved toward its fair share
 * before it is tested: 3. The sketch's error is close to normal at large cardinalities
 * (Flajolet et al. 2007), so an estimate is that far off in about 0.13% of shards and
 * windows. Our choice, stated.
 */
export const sketchMargin = 3;

/**
 * Key placement test: are the keys spread over the shards as K keys placed at random
 * would be? Balls are keys, not requests, so key popularity plays no part: this tests the
 * hashing or the shard map itself. The chance engine answers with K keys on the m shards
 * with the null shares: P(max_i r_i >= observed) for the shard with the most keys for its
 * share, P(min_i r_i <= observed) for the fewest (r_i = keys_i / (K p_i)), and the spread
 * (Pearson X^2 / (m - 1)).
 *
 * A count that is a HyperLogLog estimate is first moved `sketchMargin` standard errors
 * toward its fair share (conservative: an estimate must stand out beyond the sketch's own
 * error before it counts as evidence). Cost: two tails of the chance engine and an O(m)
 * pass. Domain: K >= 1.
 *
 * @example keyPlacementTest(counts, makePlacement(K, 64)).fullest.p
 */
export function keyPlacementTest(
  counts: KeyCounts,
  shares: Float64Array | null,
): KeyPlacementResult {
  const m = counts.distinct.length;
  let total = 0;
  for (let index = 0; index < m; index++) total += counts.distinct[index];
  const keys = Math.max(1, Math.round(total));
  const placement: Placement = { total: keys, shardCount: m, shares };
  const widen = sketchMargin * counts.standardError;
  const extremes = new LoadExtremes();
  for (let index = 0; index < m; index++) {
    const expected = keys * (shares === null ? 1 / m : shares[index]);
    const observed = counts.distinct[index] / expected;
    const exact = counts.exact[index];
    const towardHigh = exact ? observed : observed / (1 + widen);
    const towardLow = exact ? observed : observed / Math.max(1 - widen, 1e-9);
    extremes.see(index, towardHigh, towardLow);
  }
  const extreme = (index: number, tested: number, side: 'high' | 'low'): KeyExtreme => {
    const expected = keys * (shares === null ? 1 / m : shares[index]);
    const tail = side === 'high' ? fullestTail(placement, tested) : emptiestTail(placement, tested);
    return {
      index,
      keys: counts.distinct[index],
      exact: counts.exact[index],
      expected,
      relative: counts.distinct[index] / expected,
      p: probabilityFromLog(tail.logProbability),
    };
  };
  const allExact = counts.exact.every((exact) => exact);
  const spread = spreadTest(placement, counts.distinct);
  return {
    keys,
    fullest: extreme(extremes.highest, extremes.highestValue, 'high'),
    emptiest: extreme(extremes.lowest, extremes.lowestValue, 'low'),
    phi: spread.dispersion,
    spreadP: allExact ? probabilityFromLog(spread.logProbability) : null,
    margin: sketchMargin,
  };
}

/**
 * The max-statistic p-value of one shard's key count (the same law as the fullest side of
 * {@link keyPlacementTest}): P(max r >= r_i) for K keys at random. An estimate is moved
 * toward the fair share as there.
 */
export function shardKeyP(
  keys: number,
  expected: number,
  exact: boolean,
  standardError: number,
  placement: Placement,
  side: 'high' | 'low',
): number {
  const observed = keys / expected;
  const widen = sketchMargin * standardError;
  if (side === 'high') {
    const tested = exact ? observed : observed / (1 + widen);
    return probabilityFromLog(fullestTail(placement, tested).logProbability);
  }
  const tested = exact ? observed : observed / Math.max(1 - widen, 1e-9);
  return probabilityFromLog(emptiestTail(placement, tested).logProbability);
}
