/**
 * The fullest and emptiest shards' tails for many weighted shards, from share sweeps
 * (share-sweep/) instead of one tail per distinct share; the branches and switch-overs are
 * those of anyShardTail (extreme-load.ts) for many groups.
 */
import { edgeworthBoxFromSums, type BoxOptions, type BoxProbability } from './box-probability.js';
import { chanceCacheOr, type ChanceCache } from './chance-cache.js';
import {
  firstTermAlone,
  LOG_NEGLIGIBLE_S1,
  MANY_GROUPS_SWITCH,
  pairEstimatedTail,
  tailFromComplement,
  type Side,
  type TailProbability,
} from './extreme-load.js';
import { sweepCuts } from './share-sweep/cut-sums.js';
import {
  PRUNE_EXACT,
  PRUNE_QUICK,
  thresholdAt,
  type ShareSweep,
} from './share-sweep/sorted-shares.js';
import { sweepTails, type TailSums } from './share-sweep/tail-sums.js';

/** Error allowed for the sweep's per-shard tails (interpolation and series, relative). */
const SWEEP_ERROR = 2e-8;

/**
 * The same question for many weighted shards, answered from share sweeps (share-sweep/)
 * instead of one tail per distinct share: S1 and the pair estimate from a binomial sweep;
 * the complement from Poisson sweeps at Levin's rate and the Edgeworth step. The branches
 * and switch-overs are anyShardTail's for many groups. Null when a sweep refuses (the
 * caller then asks anyShardTail). O(m) per sweep, about 1-4 sweeps.
 */
export function sweptShardTail(
  side: Side,
  sweep: ShareSweep,
  relative: number,
  options: BoxOptions = {},
): TailProbability | null {
  const total = sweep.total;
  // A threshold of 0 on side high (a load within rounding of 0 on the smallest share): that
  // shard surely reaches it.
  if (side === 'high' && thresholdAt('high', relative * (total * sweep.shares[0])) <= 0)
    return { logProbability: 0, method: 'certain', relativeError: 0 };
  // A single question (not a search, which asks about extreme levels) is most often about a
  // load whose tail is not small: the Poisson sweep of the complement then also decides the
  // regime (its tail sum is S1's Poisson twin, within about 1e-4 of it), and the binomial
  // sweep is needed only when that sum is small.
  if (options.quick === undefined && !options.firstOrder) {
    const first = sweptComplementBox(side, sweep, relative);
    if (first === null) return null;
    if (first.tailSum > MANY_GROUPS_SWITCH) return tailFromComplement(first.box);
  }
  // A quick first-order bound (bracketing only) prunes the walk more tightly.
  const sums = lastTails(
    side,
    sweep,
    relative,
    options.firstOrder && options.quick ? PRUNE_QUICK : PRUNE_EXACT,
    chanceCacheOr(options.cache),
  );
  // Sums that are not numbers (seen on 5000 equal shares beside one of 2e-13 at N = 1e12,
  // 25 times the fair share, where the sweep's terms underflow): the sweep refuses.
  if (sums === null || Number.isNaN(sums.logSum) || Number.isNaN(sums.logSumSquares)) return null;
  if (sums.certain) return { logProbability: 0, method: 'certain', relativeError: 0 };
  const logS1 = sums.logSum;
  if (logS1 === -Infinity)
    return { logProbability: -Infinity, method: 'impossible', relativeError: 0 };
  if (options.firstOrder)
    return { logProbability: logS1, method: 'first-order-bound', relativeError: Infinity };
  if (logS1 <= LOG_NEGLIGIBLE_S1) return firstTermAlone(logS1);
  if (Math.exp(logS1) <= MANY_GROUPS_SWITCH) {
    const [a, b] = sums.top;
    const pair = {
      groups: [
        { share: a.share, count: 1, threshold: a.threshold },
        { share: b.share, count: 1, threshold: b.threshold },
      ],
      logProduct: a.logTail + b.logTail,
    };
    return pairEstimatedTail(side, total, logS1, sums.logSumSquares, pair, options);
  }
  const none = sweptComplementBox(side, sweep, relative);
  return none === null ? null : tailFromComplement(none.box);
}

/**
 * The binomial sweep's sums, the latest kept in the cache (ChanceCache.latestTails): a
 * search asks for the same load quickly and accurately.
 */
function lastTails(
  side: Side,
  sweep: ShareSweep,
  relative: number,
  margin: number,
  cache: ChanceCache,
): TailSums | null {
  const latest = cache.latestTails;
  if (
    latest?.sweep === sweep &&
    latest.side === side &&
    latest.relative === relative &&
    latest.margin >= margin
  )
    return latest.sums;
  const sums = sweepTails(side, sweep, relative, margin);
  cache.latestTails = { sweep, side, relative, margin, sums };
  return sums;
}

/**
 * Levin's box "no shard reaches its threshold" from Poisson sweeps. The saddle point s
 * (E[W] = N) is one Newton step from s = N in log s (d E[W] / d log s = Var W): where that
 * step is tiny, the sums are carried to it to first order instead of being swept again,
 * since for the cut Poisson laws d kappa_r / d log s = kappa_(r+1) (an exponential family
 * in log s) and d(log mass) / d log s = -u0 (the sweep's own sum); the neglected second
 * order is below 1e-8. Otherwise Newton steps sweep again until E[W] is within 1e-3
 * standard deviations of N. Then the Edgeworth step. Null when a sweep refuses.
 */
function sweptComplementBox(
  side: Side,
  sweep: ShareSweep,
  relative: number,
): { box: BoxProbability; tailSum: number } | null {
  const total = sweep.total;
  const shareSum = sweep.prefix[sweep.shares.length];
  let logRate = Math.log(total);
  let tailSum = NaN;
  for (let step = 0; step < 8; step++) {
    const rate = Math.exp(logRate);
    const cuts = sweepCuts(side, sweep, relative, rate);
    if (cuts === null) return null;
    if (step === 0) tailSum = cuts.tailSum;
    if (cuts.empty)
      return {
        box: { logProbability: -Infinity, method: 'impossible', relativeError: 0 },
        tailSum: Infinity,
      };
    const kappa = cuts.cumulants;
    const gap = total - kappa[0];
    const variance = kappa[1];
    if (!(variance > 0)) return null;
    // Newton's last step is taken within a standard deviation of N (the Edgeworth density
    // holds there); further off, the sweep's cumulants have left their range (a cut many
    // standard deviations from the rate) and the sweep refuses.
    const settled = Math.abs(gap) <= 1e-3 * Math.sqrt(variance);
    if (settled || (step === 7 && Math.abs(gap) <= Math.sqrt(variance)))
      return {
        box: edgeworthBoxFromSums(total, rate * shareSum, cuts.logMassSum, kappa, SWEEP_ERROR),
        tailSum,
      };
    const delta = gap / variance;
    // Second-order terms: kappa_(r+2) delta^2 / 2 for the cumulants (kappa_1 moves by about
    // N delta^2 / 2, far inside 1e-3 sd), and d(sum u0)/dlog s delta^2 / 2 for the log mass,
    // where d u0 / dlog s is about u0 (2 elasticity + 1).
    if (
      cuts.uSpread * delta * delta <= 1e-8 &&
      (kappa[0] * delta * delta) / 2 <= 1e-4 * Math.sqrt(variance)
    ) {
      // kappa_6 stands in for kappa_7 (a cut Poisson law's cumulants are all near its mean).
      const moved = Float64Array.from(
        kappa,
        (k, r) => k + (r < 5 ? kappa[r + 1] : kappa[5]) * delta,
      );
      return {
        box: edgeworthBoxFromSums(
          total,
          Math.exp(logRate + delta) * shareSum,
          cuts.logMassSum - cuts.uSum * delta,
          moved,
          SWEEP_ERROR + cuts.uSpread * delta * delta,
        ),
        tailSum,
      };
    }
    logRate += delta;
  }
  return null;
}
