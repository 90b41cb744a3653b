import { chanceCacheOr, type ChanceCache } from './chance-cache.js';

/**
 * A window's placement question: `total` units of load on `shardCount` shards with
 * expected shares (null for equal shares). Loads are compared as relative loads
 * r_i = x_i / (total p_i), so that a shard with twice the hash range is allowed twice the load.
 */
export interface Placement {
  /** N, the number of independent placements (requests) in the window. */
  readonly total: number;
  /** m, the number of shards in the declared universe. */
  readonly shardCount: number;
  /** Expected shares p_1..p_m summing to 1, or null for equal shares 1/m. */
  readonly shares: Float64Array | null;
}

/**
 * Tolerance for turning a relative load back into a count (rounding of t N p): a threshold
 * is ceil(t N p - 1e-9 t N p) on the high side and floor(t N p + ...) on the low side,
 * so that a shard's own relative load maps back to its own count.
 */
export const EXTREME_ROUNDING = 1e-9;

/**
 * The slack of that rounding at position x = t N p, in counts: EXTREME_ROUNDING x up to
 * x = 1e6, then 1e-3 + 1e-14 x. A relative load carries about 4 roundings (2e-16 each)
 * back into its count, so 1e-14 x keeps a margin of ten; 1e-9 x would reach 1e6 counts at
 * x = 1e15, 0.03 standard deviations, and move a tail eight standard deviations out by a
 * quarter. The slack is relative all the way down: rounding cannot carry a positive x to 0,
 * and an absolute 1e-9 below x = 1 (as once here) read any x under 1e-9 as a threshold of 0,
 * "certain": a shard of 1e-9 of the traffic beside two of 1 and 2 made one request's
 * fullest load "surely" above 3, so the median read 3 where 1.5 is right.
 */
export function roundingSlack(x: number): number {
  return Math.min(EXTREME_ROUNDING * x, 1e-3 + 1e-14 * x);
}

/** Shards sharing a share value, with their positions in the universe. */
export interface ShareClass {
  readonly share: number;
  readonly count: number;
}

/**
 * Validated placement. Throws RangeError naming the bad field: total must be a whole
 * number in [0, 2^53), shardCount a whole number >= 1, shares finite, non-negative, not all
 * zero, of length shardCount (they are normalised to sum to 1).
 * O(m). Example: makePlacement(23, 365) is the birthday problem.
 */
export function makePlacement(
  total: number,
  shardCount: number,
  weights?: ArrayLike<number>,
): Placement {
  if (!Number.isSafeInteger(total) || total < 0) {
    throw new RangeError(`requests must be a whole number from 0 to 2^53-1, got ${total}`);
  }
  if (!Number.isSafeInteger(shardCount) || shardCount < 1) {
    throw new RangeError(`shards must be a whole number of at least 1, got ${shardCount}`);
  }
  if (weights === undefined) return { total, shardCount, shares: null };
  if (weights.length !== shardCount) {
    throw new RangeError(`expected ${shardCount} weights, got ${weights.length}`);
  }
  let sum = 0;
  for (let i = 0; i < weights.length; i++) {
    const w = weights[i];
    if (!Number.isFinite(w) || w < 0)
      throw new RangeError(`weight ${i} must be a finite number >= 0, got ${w}`);
    sum += w;
  }
  if (!(sum > 0)) throw new RangeError('weights are all zero');
  const shares = new Float64Array(shardCount);
  let equal = true;
  for (let i = 0; i < weights.length; i++) {
    shares[i] = weights[i] / sum;
    if (weights[i] !== weights[0]) equal = false;
  }
  return { total, shardCount, shares: equal ? null : shares };
}

/** Share of shard i. O(1). */
export function shareOf(placement: Placement, index: number): number {
  return placement.shares === null ? 1 / placement.shardCount : placement.shares[index];
}

/**
 * The distinct shares and how many shards hold each (one class for equal shares), in
 * ascending share. O(m log m) for weighted shares, once per shares vector and cache
 * (quantile searches ask dozens of times per window; the shares do not change); without a
 * cache, the default (chance-cache.ts). Example: shares [0.5, 0.25, 0.25] give two classes.
 */
export function shareClasses(placement: Placement, cache?: ChanceCache): readonly ShareClass[] {
  if (placement.shares === null)
    return [{ share: 1 / placement.shardCount, count: placement.shardCount }];
  const work = chanceCacheOr(cache).forShares(placement.shares);
  if (work.classes !== undefined) return work.classes;
  const sorted = Float64Array.from(placement.shares).sort();
  const classes: ShareClass[] = [];
  let start = 0;
  for (let i = 1; i <= sorted.length; i++) {
    if (i === sorted.length || sorted[i] !== sorted[start]) {
      classes.push({ share: sorted[start], count: i - start });
      start = i;
    }
  }
  work.classes = classes;
  return classes;
}
