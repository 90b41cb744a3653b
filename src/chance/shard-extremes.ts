import type { BoxOptions } from './box-probability.js';
import { anyShardTail, type TailProbability, type ThresholdGroup } from './extreme-load.js';
import { shareClasses, type Placement } from './placement.js';

/**
 * The fullest and the emptiest shard of a window under random placement: tail
 * probabilities, quantiles (the chance ceiling and floor) and means, in relative load
 * r = x / (N p) (for equal shares, r = x m / N, so counts follow by multiplying by N/m).
 *
 * Exact questions map to integer thresholds per shard: "some r_i >= t" is
 * "some x_i >= ceil(t N p_i)", and "some r_i <= u" is "some x_i <= floor(u N p_i)".
 */

/** Tail levels up to this are bracketed with the first Bonferroni bound (weighted shares). */
const FIRST_ORDER_LEVEL = 0.03;

/** Tolerance for turning a relative load back into a count (rounding of t N p). */
const ROUNDING = 1e-9;

function groups(placement: Placement, relative: number, side: 'high' | 'low'): ThresholdGroup[] {
  return shareClasses(placement).map((c) => {
    const expected = placement.total * c.share;
    const scaled = relative * expected;
    const threshold =
      side === 'high'
        ? Math.ceil(scaled - ROUNDING * Math.max(1, scaled))
        : Math.floor(scaled + ROUNDING * Math.max(1, scaled));
    return { share: c.share, count: c.count, threshold };
  });
}

/**
 * P(max_i r_i >= relative) under H0, the fullest-shard p-value when `relative` is the
 * observed maximum. Single-step max-statistic adjusted p-value of a shard with relative load
 * r is fullestTail(placement, r).
 * Cost: O(distinct shares) tails and box probabilities. Error: relative <= 1e-3 on [1e-15, 1].
 * Example: fullestTail(makePlacement(23, 365), 2 * 365 / 23) = 0.5072972343239857.
 */
export function fullestTail(
  placement: Placement,
  relative: number,
  options: BoxOptions = {},
): TailProbability {
  if (placement.total === 0 || relative <= 0)
    return { logProbability: 0, method: 'certain', relativeError: 0 };
  return anyShardTail('high', placement.total, groups(placement, relative, 'high'), options);
}

/**
 * P(min_i r_i <= relative) under H0, the emptiest-shard p-value when `relative` is the
 * observed minimum. Cost and error as fullestTail.
 * Example: emptiestTail(makePlacement(2, 2), 0) = 0.5 (both requests on one shard).
 */
export function emptiestTail(
  placement: Placement,
  relative: number,
  options: BoxOptions = {},
): TailProbability {
  if (relative < 0) return { logProbability: -Infinity, method: 'impossible', relativeError: 0 };
  if (placement.total === 0) return { logProbability: 0, method: 'certain', relativeError: 0 };
  return anyShardTail('low', placement.total, groups(placement, relative, 'low'), options);
}

/** The largest expected count over the shards: the scale of one count in relative load. */
function unit(placement: Placement): number {
  let smallest = Infinity;
  for (const c of shareClasses(placement)) smallest = Math.min(smallest, placement.total * c.share);
  return 1 / Math.max(smallest, 1e-300);
}

/**
 * Quantile of the fullest shard's relative load: the smallest t with P(max r <= t) >= level,
 * i.e. P(max r > t) <= 1 - level. At level 1 - alpha this is the chance ceiling.
 * For equal shares t * N / m is a whole count. Bisection on t; O(log(range)) tails.
 * Example: fullestQuantile(makePlacement(23, 365), 0.5) = 2 * 365 / 23 (the birthday median is a pair).
 */
export function fullestQuantile(placement: Placement, level: number): number {
  if (placement.total === 0) return 0;
  // While bracketing an extreme level, the first Bonferroni bound S1 (>= the tail, and
  // within S1^2/2 of it) is close enough and costs one pass over the shards.
  const firstOrder = placement.shares !== null && 1 - level <= FIRST_ORDER_LEVEL;
  const exceeds = (quick: boolean) => (t: number) =>
    Math.exp(fullestTail(placement, t, { quick, firstOrder: quick && firstOrder }).logProbability) >
    1 - level;
  return searchRelative(placement, exceeds, 'high');
}

/**
 * Quantile of the emptiest shard's relative load: the smallest u with P(min r <= u) >= level.
 * At level alpha this is the chance floor. O(log(range)) tails.
 * Example: emptiestQuantile(makePlacement(2, 2), 0.5) = 0.
 */
export function emptiestQuantile(placement: Placement, level: number): number {
  if (placement.total === 0) return 0;
  // "u is below the quantile" <=> P(min r <= u) < level.
  const firstOrder = placement.shares !== null && level <= FIRST_ORDER_LEVEL;
  const below = (quick: boolean) => (u: number) =>
    Math.exp(
      emptiestTail(placement, u, { quick, firstOrder: quick && firstOrder }).logProbability,
    ) < level;
  return searchRelative(placement, below, 'low');
}

/**
 * Smallest relative load t for which `before(t)` turns false, where before is monotone
 * (true below the answer). For equal shares the answer is a whole count; for weighted
 * shares it is located to a relative 1e-7.
 */
function searchRelative(
  placement: Placement,
  makeTest: (quick: boolean) => (t: number) => boolean,
  side: 'high' | 'low',
): number {
  // Bracket and bisect with quick evaluations, then settle the last step with full accuracy.
  const before = makeTest(true);
  const accurate = makeTest(false);
  const step = unit(placement);
  const equal = placement.shares === null;
  const fair = placement.total / placement.shardCount;
  if (equal) {
    // Integer search over counts. For the fullest shard the answer q satisfies
    // "P(max > q) <= 1 - level": before(q + 1) is evaluated at the next count.
    let lo = side === 'high' ? Math.ceil(fair) - 1 : 0;
    let hi = side === 'high' ? Math.ceil(fair) : Math.floor(fair);
    const test = (k: number) => (side === 'high' ? before((k + 1) / fair) : before(k / fair));
    if (side === 'high') {
      let width = Math.max(1, Math.ceil(Math.sqrt(fair)));
      while (test(hi)) {
        lo = hi;
        hi = Math.min(placement.total, hi + width);
        width *= 2;
        if (lo === placement.total) return placement.total / fair;
      }
    } else if (!test(lo)) {
      return 0;
    }
    // Invariant: test(lo) true (or lo below every answer), test(hi) false.
    while (hi - lo > 1) {
      const mid = Math.floor((lo + hi) / 2);
      if (test(mid)) lo = mid;
      else hi = mid;
    }
    const exact = (k: number) => (side === 'high' ? accurate((k + 1) / fair) : accurate(k / fair));
    while (exact(hi) && hi < placement.total) hi++;
    while (hi > 0 && !exact(hi - 1)) hi--;
    return hi / fair;
  }
  let lo = side === 'high' ? 1 : 0;
  let hi = side === 'high' ? 1 + step : 1;
  if (side === 'high') {
    while (before(hi)) {
      lo = hi;
      hi = 1 + 2 * (hi - 1);
      if (hi > 1e12) break;
    }
  } else if (!before(0)) {
    return 0;
  }
  // Quick bisection to a relative 1e-7, then full accuracy from a narrow bracket (widened if
  // the quick answer was off). The tail only changes where some t N p_i is a whole count,
  // so the accurate search stops once both ends give every shard the same threshold.
  for (let i = 0; i < 200 && hi - lo > 1e-7 * hi; i++) {
    const mid = (lo + hi) / 2;
    if (before(mid)) lo = mid;
    else hi = mid;
  }
  const floorT = side === 'high' ? 1 : 0;
  let width = Math.max(2e-3 * hi, hi - lo);
  lo = Math.max(floorT, hi - width);
  while (lo > floorT && !accurate(lo)) {
    width *= 4;
    lo = Math.max(floorT, hi - width);
  }
  while (accurate(hi)) hi += width;
  // Bisect until exactly one share class changes its threshold between the ends: the
  // answer is then that class's breakpoint (for equal shares this is the whole count).
  for (let i = 0; i < 200 && hi - lo > 1e-12 * hi; i++) {
    const low = groups(placement, lo, side);
    const high = groups(placement, hi, side);
    let changed = -1;
    let changes = 0;
    for (let g = 0; g < low.length; g++) {
      if (low[g].threshold !== high[g].threshold) {
        changes++;
        changed = g;
      }
    }
    if (changes === 1 && Math.abs(high[changed].threshold - low[changed].threshold) === 1) {
      const expected = placement.total * high[changed].share;
      return side === 'high'
        ? (high[changed].threshold - 1) / expected
        : high[changed].threshold / expected;
    }
    if (changes === 0) break;
    const mid = (lo + hi) / 2;
    if (accurate(mid)) lo = mid;
    else hi = mid;
  }
  return hi;
}

/**
 * Expected relative load of the fullest shard, E[max r]. For equal shares
 * E[max x] = sum_{k>=1} P(max x >= k), summed exactly over the counts where the tail is
 * neither 1 nor negligible; where that range is wider than `nodes` counts (or for weighted
 * shares), the smooth tail is integrated on `nodes` points by the trapezoid rule.
 * O(nodes) tails. Example: fullestMean(makePlacement(2, 2)) = 1.5 / 1 (counts 1.5).
 */
export function fullestMean(placement: Placement, nodes = 400): number {
  if (placement.total === 0) return 0;
  const tail = (t: number) => Math.exp(fullestTail(placement, t).logProbability);
  const top = fullestQuantile(placement, 1 - 1e-15);
  return 1 + integrateTail(placement, tail, 1, top, nodes, 'high');
}

/**
 * Expected relative load of the emptiest shard, E[min r] = integral of P(min r >= u) over
 * [0, 1], summed over whole counts for equal shares. O(nodes) tails.
 * Example: emptiestMean(makePlacement(2, 2)) = 0.5 (counts 0.5).
 */
export function emptiestMean(placement: Placement, nodes = 400): number {
  if (placement.total === 0) return 0;
  // P(min r >= u) = 1 - P(min r <= u - one count).
  const bottom = emptiestQuantile(placement, 1e-15);
  const survival = (u: number) => -Math.expm1(emptiestTail(placement, u).logProbability);
  return bottom + integrateTail(placement, survival, bottom, 1, nodes, 'low');
}

function integrateTail(
  placement: Placement,
  tail: (t: number) => number,
  from: number,
  to: number,
  nodes: number,
  side: 'high' | 'low',
): number {
  if (!(to > from)) return 0;
  if (placement.shares === null) {
    const fair = placement.total / placement.shardCount;
    // Counts strictly above `from` up to `to`: E[max x] - ceil-part, in counts.
    const first = Math.round(from * fair) + 1;
    const last = Math.round(to * fair);
    if (last - first + 1 <= nodes * 4) {
      let sum = 0;
      for (let k = first; k <= last; k++) {
        // high: P(max >= k); low: P(min >= k) = 1 - P(min <= k - 1)
        sum += side === 'high' ? tail(k / fair) : tail((k - 1) / fair);
      }
      return sum / fair;
    }
    const h = (last - first) / nodes;
    let sum = 0;
    for (let i = 0; i <= nodes; i++) {
      const k = first + i * h;
      const weight = i === 0 || i === nodes ? 0.5 : 1;
      sum += weight * (side === 'high' ? tail(k / fair) : tail((k - 1) / fair));
    }
    return (sum * h) / fair + (side === 'high' ? 0 : 0);
  }
  const h = (to - from) / nodes;
  let sum = 0;
  for (let i = 0; i <= nodes; i++) {
    const weight = i === 0 || i === nodes ? 0.5 : 1;
    sum += weight * tail(from + i * h);
  }
  return sum * h;
}
