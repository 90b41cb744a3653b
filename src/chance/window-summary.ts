import type { ChanceCache } from './chance-cache.js';
import { emptyShardMoments, emptyShardsTail } from './empty-shards.js';
import { LoadExtremes } from './load-extremes.js';
import { probabilityFromLog } from './log-space.js';
import { shareOf, type Placement } from './placement.js';
import { emptiestQuantile, emptiestTail, fullestQuantile, fullestTail } from './shard-extremes.js';
import { spreadTest, type Spread } from './spread.js';

/**
 * Everything the chance engine says about one closed window: the fullest and emptiest
 * shards with their p-values, the empty-shard count, the spread, and the chance ceiling and
 * floor at the chosen alpha.
 */
export interface ExtremeShard {
  /** Dense index of the shard in the universe. */
  readonly index: number;
  /** Observed count. */
  readonly count: number;
  /** Relative load x / (N p). */
  readonly relative: number;
  /** p-value (fullest: P(max r >= r_obs); emptiest: P(min r <= r_obs)), never below 1e-300. */
  readonly p: number;
  /** Natural log of the p-value (kept below the reporting floor). */
  readonly logP: number;
  /** Method used. */
  readonly method: string;
}

export interface WindowSummary {
  readonly total: number;
  readonly shardCount: number;
  readonly fullest: ExtremeShard;
  readonly emptiest: ExtremeShard;
  readonly empty: {
    observed: number;
    expected: number;
    variance: number;
    p: number;
    logP: number;
    method: string;
  };
  readonly spread: Spread & { p: number };
  /** Chance ceiling: the (1 - alpha) quantile of the fullest shard's relative load. */
  readonly ceiling: number;
  /** Chance floor: the alpha quantile of the emptiest shard's relative load. */
  readonly floor: number;
  /** ceiling / fair share: the smallest hotspot this window could show (as a multiple). */
  readonly detectableExcess: number;
}

/**
 * Summary of one window. `withEmptyTests` false skips the emptiest-shard and empty-count
 * tests (an undeclared universe cannot see a shard that never reported).
 * Cost: two tails, two quantile searches (O(log range) tails each), the empty-count sum and
 * an O(m) pass. `cache` keeps the work on these shares for the next window (chance-cache.ts;
 * without one, the default). Example: 23 requests on 365 equal shards, one pair: fullest
 * p = 0.5073.
 */
export function summarizeWindow(
  placement: Placement,
  counts: ArrayLike<number>,
  alpha: number,
  withEmptyTests = true,
  cache?: ChanceCache,
): WindowSummary {
  const m = placement.shardCount;
  const n = placement.total;
  const extremes = new LoadExtremes();
  let empties = 0;
  for (let i = 0; i < m; i++) {
    const expected = n * shareOf(placement, i);
    extremes.see(i, expected > 0 ? counts[i] / expected : counts[i] > 0 ? Infinity : 1);
    if (counts[i] === 0 && expected > 0) empties++;
  }
  const extreme = (
    index: number,
    relative: number,
    tail: { readonly logProbability: number; readonly method: string },
  ): ExtremeShard => ({
    index,
    count: counts[index],
    relative: n > 0 ? relative : 0,
    p: probabilityFromLog(tail.logProbability),
    logP: tail.logProbability,
    method: tail.method,
  });
  const fullest = extreme(
    extremes.highest,
    extremes.highestValue,
    fullestTail(placement, extremes.highestValue, { cache }),
  );
  const emptiest = extreme(
    extremes.lowest,
    extremes.lowestValue,
    withEmptyTests
      ? emptiestTail(placement, extremes.lowestValue, { cache })
      : { logProbability: 0, method: 'off' },
  );
  const moments = emptyShardMoments(placement, cache);
  const emptyTail = withEmptyTests
    ? emptyShardsTail(placement, empties, cache)
    : { logProbability: 0, method: 'off' };
  const spread = spreadTest(placement, counts);
  const ceiling = fullestQuantile(placement, 1 - alpha, cache);
  const floor = withEmptyTests ? emptiestQuantile(placement, alpha, cache) : 0;
  return {
    total: n,
    shardCount: m,
    fullest,
    emptiest,
    empty: {
      observed: empties,
      expected: moments.mean,
      variance: moments.variance,
      p: probabilityFromLog(emptyTail.logProbability),
      logP: emptyTail.logProbability,
      method: emptyTail.method,
    },
    spread: { ...spread, p: probabilityFromLog(spread.logProbability) },
    ceiling,
    floor,
    detectableExcess: ceiling,
  };
}
