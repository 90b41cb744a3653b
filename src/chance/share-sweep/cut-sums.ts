import type { CutAccumulator } from './accumulators.js';
import { PRUNE_EXACT, type ShareSweep, type Side } from './sorted-shares.js';
import { walk } from './walk.js';

/** What a Poisson sweep returns: the pieces of Levin's representation of "no shard reaches". */
export interface CutSums {
  /** log prod_i P(Y_i does not reach its threshold). */
  readonly logMassSum: number;
  /** Sums over the shards of the first six cumulants of the cut Y_i. */
  readonly cumulants: Float64Array;
  /** Some cut holds nothing (a shard always reaches): the box is empty. */
  readonly empty: boolean;
  /** sum_i u0_i = sum_i mean_i dT_i/dmean_i / mass_i: minus d(log mass sum) / d(log s). */
  readonly uSum: number;
  /** sum_i |u0_i| (|elasticity_i| + 1): about the size of d(sum u0) / d(log s). */
  readonly uSpread: number;
  /** sum_i P(Y_i reaches its threshold): the Poisson twin of the first Bonferroni sum. */
  readonly tailSum: number;
}

/**
 * Poisson sweep at Levin's rate s: for each shard the cut "does not reach its threshold"
 * of Y_i ~ Poisson(s p_i) (a ceiling at k_i - 1 on side high, a floor at k_i + 1 on side
 * low), its log mass and its first six cumulants, summed. u0 = mean dT/dmean / mass is
 * mean P(Y = k - 1) / P(Y <= k - 1) on side high and -mean P(Y = k) / P(Y >= k + 1) on side
 * low (see addCut). O(nodes + m).
 */
export function sweepCuts(
  side: Side,
  sweep: ShareSweep,
  relative: number,
  rate: number,
): CutSums | null {
  const acc: CutAccumulator = {
    rate,
    edgeShift: side === 'high' ? 0 : 1,
    logMassSum: 0,
    means: 0,
    u: new Float64Array(6),
    empty: false,
    uSpread: 0,
    tailSum: 0,
  };
  const count = walk(
    { side, law: { kind: 'poisson', rate }, sweep, relative },
    PRUNE_EXACT,
    null,
    acc,
  );
  if (count === null || Number.isNaN(acc.logMassSum)) return null;
  if (acc.empty)
    return {
      logMassSum: -Infinity,
      cumulants: new Float64Array(6),
      empty: true,
      uSum: 0,
      uSpread: 0,
      tailSum: Infinity,
    };
  // kappa_r = mean - (r - 1)! u_{r-1}; a pruned shard's cut holds all but e^-40 of its
  // tail's mass, so it is its plain Poisson law (every cumulant the mean).
  const means = acc.means + rate * (sweep.prefix[sweep.shares.length] - sweep.prefix[count]);
  const u = acc.u;
  const cumulants = Float64Array.of(
    means - u[0],
    means - u[1],
    means - 2 * u[2],
    means - 6 * u[3],
    means - 24 * u[4],
    means - 120 * u[5],
  );
  return {
    logMassSum: acc.logMassSum,
    cumulants,
    empty: false,
    uSum: u[0],
    uSpread: acc.uSpread,
    tailSum: acc.tailSum,
  };
}
