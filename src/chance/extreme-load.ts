import {
  boxLogProbability,
  exactBoxWorkEstimate,
  type BoxProbability,
  ROUTINE_EXACT_BUDGET,
  type BoxOptions,
  type ShardGroup,
} from './box-probability.js';
import type { ChanceCache } from './chance-cache.js';
import { logChoose } from './discrete-densities.js';
import { normalBox, normalBoxPoints } from './gaussian-box.js';
import { log1mExp, logAddExp, logDifference } from './log-space.js';
import { logBinomialAtLeast, logBinomialAtMost } from './tails.js';

/**
 * Tail probabilities of the fullest and the emptiest shard under random placement.
 *
 * The question "does some shard reach its threshold?" is answered two ways, each where it
 * is accurate:
 * - when the single-shard tails are small (their sum S1 below a switch-over), by the
 *   Bonferroni inequalities S1 - S2 <= P <= S1 (and S1 - S2 + S3 >= P), with the joint
 *   tails S2, S3 computed by Levin's representation (box-probability.ts); the answer is
 *   then accurate far beyond 1e-15 and needs no subtraction from 1;
 * - otherwise as 1 - P(no shard reaches it), the complement of a box probability, which is
 *   well-conditioned once the answer is not small.
 * Feller (1968), "An Introduction to Probability Theory and Its Applications", vol. 1,
 * ch. IV, for the inclusion-exclusion (Bonferroni) bounds.
 */

/** Shards with one share and one integer threshold. */
export interface ThresholdGroup {
  /** Expected share p of each shard (0 < p <= 1). */
  readonly share: number;
  /** Number of shards in the group. */
  readonly count: number;
  /** The count each shard is tested against. */
  readonly threshold: number;
}

/** A tail probability with the method that produced it. */
export interface TailProbability {
  /** Natural log of the probability. */
  readonly logProbability: number;
  /**
   * `inclusion-exclusion`, `complement-exact`, `complement-edgeworth`, `complement-normal`,
   * `lower-bound`, `certain`, `impossible` (and `single-shard`, `first-order-bound`).
   */
  readonly method: string;
  /** Estimated relative error. */
  readonly relativeError: number;
}

export type Side = 'high' | 'low';

/** Switch-over for a single group (equal shares), where S3 is available. */
const SINGLE_GROUP_SWITCH = 0.1;
/** Switch-over of S1 - S2 with exact pair tails (pairSumTail). */
const PAIR_SUM_SWITCH = 0.03;
/** Switch-over for many groups and share sweeps, where S2 is estimated from the leading pair. */
export const MANY_GROUPS_SWITCH = 0.03;
/**
 * Up to this many groups, every pair gets a joint tail (276 pairs at most); beyond, the
 * leading pair's ratio stands for all (pairEstimatedTail, error up to S1 / 2), as in the
 * share sweeps.
 */
const PAIR_GROUPS = 24;
/** ... fewer when the pairs left out can move the answer by at most this (relative). */
const PAIR_SUM_TARGET = 1e-4;
/** From this S1 on, an exact box complement is preferred to inclusion-exclusion. */
const EXACT_COMPLEMENT_FROM = 1e-4;
/** Up to this many groups, the exact box complement is tried without a work estimate. */
const FEW_GROUPS = 6;

/**
 * Below this log S1 the answer is S1 itself. Multinomial counts are negatively associated
 * (Joag-Dev and Proschan 1983, "Negative association of random variables", Annals of
 * Statistics 11, 286-295), so every joint tail is at most the product of its single tails:
 * S2 <= S1^2 / 2, and S1 - S2 <= P <= S1 puts S1 within a relative S1 / 2 (here 5e-21)
 * of the answer. The joint tails, no longer needed, are where Levin's box is least
 * reliable (cuts hundreds of standard deviations out, as a quantile search at N = 1e15
 * asks for).
 */
export const LOG_NEGLIGIBLE_S1 = Math.log(1e-20);

/** The answer S1 when S1 is negligible beside 1 (see LOG_NEGLIGIBLE_S1). */
export function firstTermAlone(logS1: number): TailProbability {
  return {
    logProbability: logS1,
    method: 'inclusion-exclusion',
    relativeError: Math.max(1e-13, Math.exp(logS1) / 2),
  };
}

/**
 * Whether the exact complement could be within the routine budget (an estimate with a
 * margin of 10, so that only clearly unaffordable exact boxes are skipped).
 */
function exactComplementMayBeCheap(
  side: Side,
  total: number,
  groups: readonly ThresholdGroup[],
): boolean {
  return exactBoxWorkEstimate(total, complementBox(side, groups)) <= 10 * ROUTINE_EXACT_BUDGET;
}

/** The box "no shard reaches its threshold": a ceiling below it (high) or a floor above it (low). */
function complementBox(side: Side, groups: readonly ThresholdGroup[]): ShardGroup[] {
  return groups.map((g) =>
    side === 'high'
      ? { share: g.share, count: g.count, lower: 0, upper: g.threshold - 1 }
      : { share: g.share, count: g.count, lower: g.threshold + 1, upper: Infinity },
  );
}

function singleLogTail(side: Side, total: number, g: ThresholdGroup): number {
  return side === 'high'
    ? logBinomialAtLeast(g.threshold, total, g.share)
    : logBinomialAtMost(g.threshold, total, g.share);
}

/**
 * log P(the given shards all reach their thresholds), by Levin's representation: the named
 * shards get a floor (side high) or a ceiling (side low), all others are free.
 */
function jointLogTail(
  side: Side,
  total: number,
  members: readonly ThresholdGroup[],
  options: BoxOptions,
): number {
  let rest = 1;
  const groups: ShardGroup[] = [];
  for (const m of members) {
    rest -= m.share * m.count;
    groups.push(
      side === 'high'
        ? { share: m.share, count: m.count, lower: m.threshold, upper: Infinity }
        : { share: m.share, count: m.count, lower: 0, upper: m.threshold },
    );
  }
  if (rest > 1e-15) groups.push({ share: rest, count: 1, lower: 0, upper: Infinity });
  return boxLogProbability(total, groups, options).logProbability;
}

function complementLogTail(
  side: Side,
  total: number,
  groups: readonly ThresholdGroup[],
  options: BoxOptions,
): TailProbability {
  const tail = tailFromComplement(
    boxLogProbability(total, complementBox(side, groups), { ...options, forComplement: true }),
  );
  const usable = Number.isFinite(tail.logProbability) && tail.relativeError <= UNUSABLE_ERROR;
  if (usable && tail.relativeError <= NORMAL_SOUGHT_ABOVE) return tail;
  const normal = normalComplementTail(
    side,
    total,
    groups,
    usable ? tail.relativeError : UNUSABLE_ERROR,
    options.cache,
  );
  if (normal !== null) return normal;
  const third = thirdOrderTail(side, total, groups, options);
  if (third !== null && !(usable && tail.relativeError <= third.relativeError)) return third;
  if (usable) return tail;
  return bonferroniLowerBound(side, total, groups, tail);
}

/** Up to this many shards, thirdOrderTail takes every pair and triple (120 triples at 10). */
const THIRD_ORDER_SHARDS = 12;
/** ... and up to this S1 (relative error of S1 - S2 + S3 about S1^3 / 24: 4e-5 here). */
const THIRD_ORDER_SWITCH = 0.1;

/**
 * S1 - S2 + S3 with every joint tail by Levin's representation (jointLogTail), for a few
 * shards (THIRD_ORDER_SHARDS) whose S1 is at most THIRD_ORDER_SWITCH: where neither the box
 * complement nor its normal limit is usable (more lattice work than the normal limit takes,
 * as with shares spread over a ratio of hundreds), instead of the lower bound. An upper
 * Bonferroni bound, off by at most S4 <= S1^4 / 24 (negative association: every joint tail
 * is at most the product of its single tails). Null outside that range.
 */
function thirdOrderTail(
  side: Side,
  total: number,
  groups: readonly ThresholdGroup[],
  options: BoxOptions,
): TailProbability | null {
  const shards: ThresholdGroup[] = [];
  for (const g of groups) for (let i = 0; i < g.count; i++) shards.push({ ...g, count: 1 });
  if (shards.length > THIRD_ORDER_SHARDS) return null;
  let logS1 = -Infinity;
  for (const g of shards) logS1 = logAddExp(logS1, singleLogTail(side, total, g));
  const s1 = Math.exp(logS1);
  if (!(s1 <= THIRD_ORDER_SWITCH)) return null;
  let logS2 = -Infinity;
  let logS3 = -Infinity;
  for (let a = 0; a < shards.length; a++) {
    for (let b = a + 1; b < shards.length; b++) {
      logS2 = logAddExp(logS2, jointLogTail(side, total, [shards[a], shards[b]], options));
      for (let c = b + 1; c < shards.length; c++)
        logS3 = logAddExp(
          logS3,
          jointLogTail(side, total, [shards[a], shards[b], shards[c]], options),
        );
    }
  }
  const value = logDifference(logAddExp(logS1, logS3), logS2);
  if (!Number.isFinite(value)) return null;
  return {
    logProbability: value,
    method: 'inclusion-exclusion',
    relativeError: Math.max(1e-12, s1 ** 4 / 24 / Math.exp(value)),
  };
}

/** A complement whose estimated relative error is above this is not reported. */
const UNUSABLE_ERROR = 0.1;
/** Above this estimated error of the box complement, the normal limit is tried too. */
const NORMAL_SOUGHT_ABOVE = 1e-4;
/** Up to this many shards, the normal limit of the box is computed (gaussian-box.ts). */
const NORMAL_MAX_SHARDS = 64;
/**
 * ... and up to this work, shards times lattice length (normalBoxPoints), about 0.1-0.2 s
 * on one core: 3 shards up to a share ratio of 1e4, 8 up to about 100, 16 equal ones.
 */
const NORMAL_MAX_WORK = 600_000;

/**
 * 1 minus the box "no shard reaches its threshold" in the multinomial's normal limit
 * (gaussian-box.ts), for few shards (NORMAL_MAX_SHARDS, NORMAL_MAX_WORK) at huge totals, method
 * `complement-normal`. Its error: the numeric error of the normal box (Richardson
 * estimate, about 1e-9 absolute) over the tail, plus the first neglected term of the
 * lattice Edgeworth expansion, estimated as max_i (1 + |z_i|)^3 / sqrt(N p_i (1 - p_i))
 * (skewness, with a margin of 6 over the single binomial's term for the cross cumulants)
 * and 1 / (N p_min) (lattice), z_i the cut of shard i in its standard deviations. Against
 * huge.json's three-shard Euler-Maclaurin sums it is within 1e-6 relative for tails from
 * 0.03 up, N = 1e12 to 2^53 - 1. Null when there are more shards or too much work, or
 * the error estimate is not below `toBeat` (the box complement's, checked first on the
 * Edgeworth part so that small totals cost nothing).
 */
function normalComplementTail(
  side: Side,
  total: number,
  groups: readonly ThresholdGroup[],
  toBeat: number,
  cache: ChanceCache | undefined,
): TailProbability | null {
  const shardCount = groups.reduce((n, g) => n + g.count, 0);
  if (shardCount > NORMAL_MAX_SHARDS) return null;
  const root = Math.sqrt(total);
  const cuts = [];
  let edgeworth = 0;
  for (const g of groups) {
    const mean = total * g.share;
    const sd = Math.sqrt(mean * (1 - g.share));
    // High: X <= k - 1, taken as X < k - 1/2. Low: X >= k + 1, as -X < -(k + 1/2).
    const cut = side === 'high' ? g.threshold - 0.5 - mean : mean - g.threshold - 0.5;
    const z = Math.abs(cut) / sd;
    edgeworth = Math.max(edgeworth, (1 + z) ** 3 / sd + 1 / mean);
    for (let i = 0; i < g.count; i++) cuts.push({ share: g.share, cut: cut / root });
  }
  // Not worth the convolutions when the neglected terms alone lose to the box.
  if (!(edgeworth < toBeat) || shardCount * normalBoxPoints(cuts) > NORMAL_MAX_WORK) return null;
  const none = normalBox(cuts, cache);
  const tail = 1 - none.probability;
  if (!(tail > 0)) return null;
  const relativeError = none.numericError / tail + edgeworth;
  if (!(relativeError < toBeat)) return null;
  return { logProbability: Math.log(tail), method: 'complement-normal', relativeError };
}

/**
 * Last resort where neither Levin's box, nor the normal limit, nor thirdOrderTail is usable
 * (more shards than those take, N p in the trillions, a cut near the fair share: the cut laws
 * keep skewed shapes however large N is, so the Edgeworth step does not converge, and the
 * exact convolution is out of reach): the tail is reported as its lower bound
 * 1 - prod_i (1 - T_i), T_i the single tails, method `lower-bound`, with the relative gap to
 * the upper bound min(1, S1) as its error. Multinomial counts are negatively associated
 * (Joag-Dev and Proschan 1983), so P(no shard reaches its threshold) = P(all X_i < c_i) is
 * at most prod_i P(X_i < c_i); the bound is at least S1 - S1^2 / 2 (Bonferroni) and the
 * largest single tail. Just past certainty (thresholds that the N requests only just fail
 * to fill) it is 1 within 1e-300 where the largest single tail is near 1/2. This happens
 * only where the tail is above the switch-over (0.03 and more), so no finding at an alpha
 * below 0.03 changes with it.
 */
function bonferroniLowerBound(
  side: Side,
  total: number,
  groups: readonly ThresholdGroup[],
  failed: TailProbability,
): TailProbability {
  let logS1 = -Infinity;
  // log prod_i (1 - T_i)^count: the upper bound on P(no shard reaches its threshold).
  let logNone = 0;
  for (const g of groups) {
    if (g.count === 0) continue;
    const t = singleLogTail(side, total, g);
    logS1 = logAddExp(logS1, Math.log(g.count) + t);
    logNone += g.count * log1mExp(Math.min(t, 0));
  }
  const logLower = log1mExp(logNone);
  const logUpper = Math.min(0, logS1);
  if (!Number.isFinite(logLower)) return failed;
  return {
    logProbability: logLower,
    method: 'lower-bound',
    relativeError: Math.expm1(logUpper - logLower),
  };
}

/** 1 minus the box "no shard reaches its threshold", with the error that magnifies. */
export function tailFromComplement(none: BoxProbability): TailProbability {
  if (none.method === 'impossible')
    return { logProbability: 0, method: 'certain', relativeError: 0 };
  const logP = log1mExp(none.logProbability);
  // The complement magnifies the box's relative error by Q / (1 - Q).
  const magnification = Math.exp(none.logProbability - logP);
  return {
    logProbability: logP,
    method: `complement-${none.method}`,
    relativeError: none.relativeError * magnification,
  };
}

/**
 * log P(some shard i has X_i >= threshold_i) (side high) or X_i <= threshold_i (side low),
 * under Multinomial(total, shares), where the groups together hold every shard.
 *
 * Cost: O(groups) single tails, plus a few box probabilities (O(groups) each); for many
 * groups no pairwise sum is formed. Accuracy: relative error below 1e-3 for results in
 * [1e-15, 1] (tested against exact enumeration, exact convolution and Monte Carlo), and
 * results below 1e-300 keep their log.
 * Example: anyShardTail('high', 23, [{share: 1/365, count: 365, threshold: 2}]) is
 * log(0.5072972343239857), the birthday problem.
 */
export function anyShardTail(
  side: Side,
  total: number,
  groups: readonly ThresholdGroup[],
  options: BoxOptions = {},
): TailProbability {
  const live = groups.filter((g) => g.count > 0 && g.share > 0);
  // Shards with no share always hold 0 load, so a threshold at or past 0 is always reached.
  const zeroShareReaches = (g: ThresholdGroup) =>
    side === 'low' ? g.threshold >= 0 : g.threshold <= 0;
  if (groups.some((g) => g.count > 0 && g.share === 0 && zeroShareReaches(g))) {
    return { logProbability: 0, method: 'certain', relativeError: 0 };
  }
  let logS1 = -Infinity;
  const logTails: number[] = [];
  for (const g of live) {
    const t = singleLogTail(side, total, g);
    logTails.push(t);
    if (t === 0) return { logProbability: 0, method: 'certain', relativeError: 0 };
    logS1 = logAddExp(logS1, Math.log(g.count) + t);
  }
  if (logS1 === -Infinity)
    return { logProbability: -Infinity, method: 'impossible', relativeError: 0 };
  // Not capped at 0: a searching caller wants the smooth bound even where it exceeds 1.
  if (options.firstOrder)
    return {
      logProbability: logS1,
      method: 'first-order-bound',
      relativeError: Infinity,
    };
  const s1 = Math.exp(logS1);
  const shardCount = live.reduce((n, g) => n + g.count, 0);
  if (shardCount === 1)
    return { logProbability: logS1, method: 'single-shard', relativeError: 1e-13 };
  if (logS1 <= LOG_NEGLIGIBLE_S1) return firstTermAlone(logS1);

  if (
    s1 >= EXACT_COMPLEMENT_FROM &&
    s1 <= SINGLE_GROUP_SWITCH &&
    (live.length <= FEW_GROUPS || exactComplementMayBeCheap(side, total, live))
  ) {
    // Where the box is cheap enough to be exact, its complement beats the truncated series
    // (absolute error about 1e-16, so relative 1e-12 even at the switch-over).
    // Only an exact box is wanted here: not complementLogTail, whose fallbacks (the normal
    // limit, up to 0.5 s) would be thrown away.
    const complement = tailFromComplement(
      boxLogProbability(total, complementBox(side, live), {
        quick: true,
        forComplement: true,
        cache: options.cache,
      }),
    );
    if (complement.method === 'complement-exact') return complement;
  }
  if (live.length === 1 && s1 <= SINGLE_GROUP_SWITCH) {
    const g = live[0];
    const logS2 = logChoose(g.count, 2) + jointLogTail(side, total, [{ ...g, count: 2 }], options);
    const logS3 =
      g.count >= 3
        ? logChoose(g.count, 3) + jointLogTail(side, total, [{ ...g, count: 3 }], options)
        : -Infinity;
    // S1 - S2 + S3: an upper Bonferroni bound whose error is at most S4 <= S1 * S3 / 4.
    const value = logDifference(logAddExp(logS1, logS3), logS2);
    return {
      logProbability: value,
      method: 'inclusion-exclusion',
      relativeError: Math.max(1e-12, Math.exp(logS3 - value) * s1),
    };
  }
  if (s1 <= PAIR_SUM_SWITCH && live.length <= PAIR_GROUPS)
    return pairSumTail(side, total, live, logTails, logS1, options);
  if (s1 <= MANY_GROUPS_SWITCH) {
    // Many groups: S2 from the leading pair's ratio, as the share sweeps do (and agree with).
    let logSumSquares = -Infinity;
    let top = 0;
    let second = -1;
    for (let i = 0; i < live.length; i++) {
      logSumSquares = logAddExp(logSumSquares, Math.log(live[i].count) + 2 * logTails[i]);
      if (logTails[i] > logTails[top]) {
        second = top;
        top = i;
      } else if (i !== top && (second < 0 || logTails[i] > logTails[second])) {
        second = i;
      }
    }
    const pair =
      live[top].count >= 2
        ? { groups: [{ ...live[top], count: 2 }], logProduct: 2 * logTails[top] }
        : {
            groups: [
              { ...live[top], count: 1 },
              { ...live[second], count: 1 },
            ],
            logProduct: logTails[top] + logTails[second],
          };
    return pairEstimatedTail(side, total, logS1, logSumSquares, pair, options);
  }
  return complementLogTail(side, total, live, options);
}

/**
 * S1 - S2, with the joint tails of every pair among the groups of largest single tails (up
 * to PAIR_GROUPS, fewer once the rest is bounded by PAIR_SUM_TARGET) computed by Levin's
 * representation (jointLogTail). The pairs that have a shard outside them ("rest", sum
 * t_i t_j under independence, at most S1^2 / 2 minus the part inside) get the true/independent ratio of the pair with the largest tails; true
 * ratios lie in [0, 1] (negative association), so that estimate is off by at most rest
 * times max(ratio, 1 - ratio). With every pair exact the error is S3 <= S1^3 / 6 (negative
 * association again), relative about S1^2 / 6: 1.5e-4 at the switch-over 0.03.
 * A single ratio for all pairs was used before for more than 6 groups: at 8-10 unequal
 * shares the pair ratios spread (the correlation of two counts is -sqrt(p_i p_j / ((1 -
 * p_i)(1 - p_j)))), which put the tail 1e-3 off near the switch-over.
 */
function pairSumTail(
  side: Side,
  total: number,
  live: readonly ThresholdGroup[],
  logTails: readonly number[],
  logS1: number,
  options: BoxOptions,
): TailProbability {
  const order = live.map((_, i) => i).sort((a, b) => logTails[b] - logTails[a]);
  const s1 = Math.exp(logS1);
  // Independent pair sums (S^2 - sum c t^2) / 2, scaled by S1^2 so that tiny tails stay finite.
  let sumAll = 0;
  let squaresAll = 0;
  for (const i of order) {
    const t = Math.exp(logTails[i] - logS1);
    sumAll += live[i].count * t;
    squaresAll += live[i].count * t * t;
  }
  const pairsAll = (sumAll * sumAll - squaresAll) / 2;
  let sumIn = 0;
  let squaresIn = 0;
  let logS2 = -Infinity;
  // The top pair's true/independent ratio, for the pairs outside.
  let logRatio = NaN;
  let restScaled = pairsAll;
  // Groups join in the order of their tails until the guess for the pairs outside is
  // bounded by PAIR_SUM_TARGET relative (P >= S1 (1 - S1 / 2)), or PAIR_GROUPS have joined.
  for (let x = 0; x < order.length && x < PAIR_GROUPS; x++) {
    // A group whose tail is below e^-700 of S1 adds under e^-700 S1^2 in pairs: it and the
    // rest (sorted) are left to restScaled, already 0 to double precision. Their joint
    // tails, astronomically far out, are not asked for (they came out NaN: 5000 equal shares
    // at 25 times their fair share beside one of 2e-13, N = 1e12).
    if (logTails[order[x]] - logS1 < -700) break;
    const a = live[order[x]];
    if (a.count >= 2) {
      const joint = jointLogTail(side, total, [{ ...a, count: 2 }], options);
      if (x === 0) logRatio = Math.min(0, joint - 2 * logTails[order[0]]);
      logS2 = logAddExp(logS2, logChoose(a.count, 2) + joint);
    }
    for (let y = 0; y < x; y++) {
      const b = live[order[y]];
      const joint = jointLogTail(
        side,
        total,
        [
          { ...b, count: 1 },
          { ...a, count: 1 },
        ],
        options,
      );
      if (x === 1 && Number.isNaN(logRatio))
        logRatio = Math.min(0, joint - logTails[order[0]] - logTails[order[1]]);
      logS2 = logAddExp(logS2, Math.log(a.count) + Math.log(b.count) + joint);
    }
    const t = Math.exp(logTails[order[x]] - logS1);
    sumIn += a.count * t;
    squaresIn += a.count * t * t;
    restScaled = Math.max(0, pairsAll - (sumIn * sumIn - squaresIn) / 2);
    if (Number.isNaN(logRatio)) continue;
    const ratio = Math.exp(logRatio);
    if ((restScaled * s1 * Math.max(ratio, 1 - ratio)) / (1 - s1 / 2) <= PAIR_SUM_TARGET) break;
  }
  const ratio = Number.isNaN(logRatio) ? 1 : Math.exp(logRatio);
  const logRest = restScaled > 0 ? 2 * logS1 + Math.log(restScaled) : -Infinity;
  const value = logDifference(logS1, logAddExp(logS2, logRest + Math.log(ratio)));
  return {
    logProbability: value,
    method: 'inclusion-exclusion',
    relativeError: Math.max(
      1e-12,
      (s1 * s1) / 6 + Math.exp(logRest - value) * Math.max(ratio, 1 - ratio),
    ),
  };
}

/**
 * S1 - S2 for many shards. S2 under independence is sum_{i<j} t_i t_j = (S1^2 - sum t_i^2) / 2;
 * multinomial cells are negatively associated, so the true S2 is below it. The ratio
 * true/independent is taken from the pair with the largest tails (one joint tail).
 */
export function pairEstimatedTail(
  side: Side,
  total: number,
  logS1: number,
  logSumSquares: number,
  pair: { groups: ThresholdGroup[]; logProduct: number },
  options: BoxOptions,
): TailProbability {
  // (S1^2 - sum T_i^2) / 2: none when one shard holds all of S1 (then rounding can put the
  // sum of squares a hair above S1^2, and the difference would be NaN).
  const logIndependent =
    logSumSquares >= 2 * logS1 ? -Infinity : logDifference(2 * logS1, logSumSquares) - Math.LN2;
  const logRatio = Math.min(0, jointLogTail(side, total, pair.groups, options) - pair.logProduct);
  const value = logDifference(logS1, logIndependent + logRatio);
  return {
    logProbability: value,
    method: 'inclusion-exclusion',
    relativeError: Math.max(1e-9, Math.exp(logS1) / 2),
  };
}
