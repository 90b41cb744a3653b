import { chanceCacheOr, type ChanceCache } from '../chance-cache.js';
import { type Placement, roundingSlack } from '../placement.js';
import type { TailState } from './accumulators.js';
import type { Coefficients } from './coefficient-table.js';

/**
 * Sums over many weighted shards of their single-shard tails at one relative load, with no
 * special-function call per shard.
 *
 * The question "does some shard reach t?" gives shard i the threshold k_i = ceil(t N p_i)
 * (side high) or floor(t N p_i) (side low). Every shard with threshold k has its position
 * x_i = t N p_i within one count of it, so its tail is the tail at the middle of that count,
 * x_c = k -+ 1/2, moved by e_i = x_i - x_c (|e_i| <= 1/2) along the law's parameter. The move
 * is a short Taylor series whose coefficients are closed-form:
 * d/dlambda P(Y >= k) = P(Y = k - 1) for Poisson(lambda), and
 * d/dp P(X >= k) = N P(X' = k - 1) with X' ~ Binomial(N - 1, p); each further derivative is
 * a backward difference of the densities (d/dp of a Binomial(M, p) density at j is
 * M [P_{M-1}(j - 1) - P_{M-1}(j)]; d/dlambda of a Poisson density is P(j - 1) - P(j)). So
 *   T(k, x_c + e) = T(k, x_c) (1 + sum_n a_n(k) e^n),  a_n = T^(n) (dtheta/de)^n / (n! T),
 *   log T(k, x_c + e) = g_0(k) + sum_n b_n(k) e^n  (the series of log(1 + A)),
 * each cut where its next term is below 1e-11 at |e| = 1/2. The a-series gives the tail
 * itself (one exponential per threshold, not per shard), the b-series its elasticity; where
 * the a-series does not settle in 16 terms the tail is exp(g_0 + B(e)).
 *
 * g_0, b_n and a_n are smooth in k. Where the thresholds of all shards span few counts,
 * every count is a node (exact tails there; a count's positions are cut into up to 16 parts
 * where the series needs it). Otherwise they are interpolated in log(k + 1) by the
 * barycentric formula through 17 to 65 exact nodes at rounded Chebyshev points (checked
 * against exact nodes halfway between), and tabulated as cubic cells of about 2% relative
 * width (checked against the interpolant at every cell's midpoint). A sweep is refused
 * (null: the grouped engine answers) when the interpolant misses an exact node by more than
 * 1e-9 or a cell its interpolant by more than 1e-8.
 *
 * A sweep costs about 25 exact tails plus a few dozen flops per distinct threshold and per
 * shard; shards are walked in ascending share, so thresholds and cells only move forward.
 * (Method ours; tested against the per-shard tails of tails.ts and the grouped engine.)
 *
 * The folder follows the method: this file sorts the shares and rounds thresholds;
 * taylor-nodes.ts computes one exact node (g_0, b_n, a_n) and evaluates its series;
 * direct-nodes.ts makes every count a node; smooth-fit.ts interpolates exact nodes over a
 * piece of thresholds, and cells.ts tabulates those pieces as cubic cells;
 * coefficient-table.ts builds (and keeps, for nearby loads) the table of one sweep;
 * walk.ts passes over the shards with it into the sums of accumulators.ts; tail-sums.ts
 * (binomial) and cut-sums.ts (Poisson) are what the rest of the chance engine calls.
 */

/** One sweep's question: a side, a law, the sorted shares and the relative load. */
export interface SweepQuery {
  readonly side: Side;
  readonly law: SweepLaw;
  readonly sweep: ShareSweep;
  readonly relative: number;
}

export type Side = 'high' | 'low';

/** The law of one shard's count in a sweep. */
export type SweepLaw =
  | { readonly kind: 'binomial' }
  /** Poisson with mean rate * share (the pieces of Levin's representation). */
  | { readonly kind: 'poisson'; readonly rate: number };

/** Weighted shares sorted for sweeping. */
export interface ShareSweep {
  readonly total: number;
  /** Shares in ascending order, all above zero. */
  readonly shares: Float64Array;
  /** prefix[i] = sum of the i smallest shares. */
  readonly prefix: Float64Array;
  /**
   * Per side, the coefficient table kept for nearby loads (coefficient-table.ts) and the
   * latest accurate binomial sweep on it (tail-sums.ts). They belong to this sweep, so they
   * go with it: a new total gets a new sweep with none.
   */
  readonly kept: Record<Side, KeptWork>;
}

/** What one side of a sweep keeps for the next question at a nearby load. */
export interface KeptWork {
  table?: Coefficients;
  tails?: TailState;
}

/** Fewer shards than this are left to the grouped engine (exact where affordable). */
export const SWEEP_FROM = 500;

/**
 * The sweep of a weighted placement, or null when shares are equal, the shards are few, a
 * share is zero, or the largest share is above 1e-2 (the grouped engine handles those).
 * O(m log m) once per shares vector and cache (chance-cache.ts; without one, the default),
 * O(1) after; a new total reuses the sorted shares in a new sweep.
 */
export function shareSweep(placement: Placement, cache?: ChanceCache): ShareSweep | null {
  const shares = placement.shares;
  if (shares === null || placement.shardCount < SWEEP_FROM) return null;
  const owner = chanceCacheOr(cache);
  const work = owner.forShares(shares);
  const known = work.sweep;
  if (known !== undefined) {
    // Whether a sweep applies depends on the shares alone; a new total reuses their order.
    if (known === null || known.total === placement.total) return known;
    const sweep: ShareSweep = {
      total: placement.total,
      shares: known.shares,
      prefix: known.prefix,
      kept: { high: {}, low: {} },
    };
    work.sweep = sweep;
    return sweep;
  }
  const sorted = Float64Array.from(shares).sort();
  owner.sweepsBuilt++;
  const sweep: ShareSweep | null =
    sorted[0] > 0 && sorted[sorted.length - 1] <= 1e-2
      ? {
          total: placement.total,
          shares: sorted,
          prefix: prefixSums(sorted),
          kept: { high: {}, low: {} },
        }
      : null;
  work.sweep = sweep;
  return sweep;
}

function prefixSums(values: Float64Array): Float64Array {
  const prefix = new Float64Array(values.length + 1);
  for (let i = 0; i < values.length; i++) prefix[i + 1] = prefix[i] + values[i];
  return prefix;
}

/**
 * At a fixed relative load a shard's tail falls as its share grows (on both sides: the
 * relative spread of its count shrinks as 1 / sqrt(N p)), up to the lattice wobble of one
 * count. So a walk in ascending share can stop once a tail is this far (in log) below the
 * largest so far: each shard left out is below e^-40 of that tail.
 */
export const PRUNE_EXACT = 40;

/** A looser margin for bracketing a quantile (answers are settled with PRUNE_EXACT). */
export const PRUNE_QUICK = 15;

/** The threshold of a shard whose threshold position is x, rounded as the grouped engine does. */
export function thresholdAt(side: Side, x: number): number {
  return side === 'high' ? Math.ceil(x - roundingSlack(x)) : Math.floor(x + roundingSlack(x));
}
