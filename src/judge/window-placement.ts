import type { Placement } from '../chance/placement.js';
import type { LoadLevel } from './judgement.js';

/**
 * A placement built without copying the shares: they are already non-negative and sum to 1
 * (the universe's or the baseline's), and makePlacement's O(m) copy per window is waste.
 * The counts' length may be below the scratch arrays' length; only the first m are read.
 */
export function placementOf(
  total: number,
  shardCount: number,
  shares: Float64Array | null,
): Placement {
  return { total, shardCount, shares };
}

/** A shard's share of the null: 1 / m when the shares are equal (null). */
export function shareAt(shares: Float64Array | null, shard: number, m: number): number {
  return shares === null ? 1 / m : shares[shard];
}

/**
 * A chance level in both units. In requests it is relative x the real fair share: a whole
 * count in exact mode (the engine's quantile is count / fair share, so the product is that
 * count up to rounding, hence the rounding to 1e-6), a fraction of one in robust mode,
 * where the level was found on the scaled counts.
 */
export function level(relative: number, equalShares: boolean, fairShare: number): LoadLevel {
  return { relative, requests: equalShares ? Math.round(relative * fairShare * 1e6) / 1e6 : null };
}
