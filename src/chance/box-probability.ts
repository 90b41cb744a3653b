import { chanceCacheOr, type ChanceCache } from './chance-cache.js';
import { logFactorial, logPoissonDensity } from './discrete-densities.js';
import { fftConvolve, type Twiddles } from './fft-convolution.js';
import { inversionWork, sumLogDensityAt, type LatticePiece } from './lattice-inversion.js';
import { log1mExp, logAddExp, logDifference } from './log-space.js';
import { logBinomialAtLeast, logBinomialAtMost } from './tails.js';
import {
  cutCumulants,
  cutLogMass,
  cutMassFunction,
  type OneSidedCut,
} from './truncated-poisson.js';

/**
 * Probability that every shard's count lies in its box, under random placement
 * (Multinomial(N, p)): P(lower_i <= X_i <= upper_i for all i).
 *
 * Method: Levin (1981), "A representation for multinomial cumulative distribution
 * functions", Annals of Statistics 9(5). For any s > 0,
 *   P(box) = N! / (s^N e^-s) * prod_i P(lower_i <= Y_i <= upper_i) * P(W = N),
 * with Y_i ~ Poisson(s p_i) independent and W the sum of the Y_i cut to their boxes.
 * s is chosen so that E[W] = N (a saddle point), which centres W on N. P(W = N) is then
 * either computed exactly by convolving the cut mass functions (when that is cheap or when
 * the shape of W is far from normal) or by the local Edgeworth expansion to second order
 * (cumulants up to the sixth; Petrov 1975, "Sums of Independent Random Variables",
 * ch. VII), whose remaining error is of third order in the standardised cumulants.
 *
 * Shards with the same share and the same box form a group, so equal shares cost O(1)
 * and weighted shares O(number of distinct groups). Each box is one-sided (a ceiling, a
 * floor) or absent, which is all the fullest-shard, emptiest-shard and inclusion-exclusion
 * questions need.
 */

/** Shards that share a share and a box. */
export interface ShardGroup {
  /** Expected share p of each shard in the group (0 < p <= 1). */
  readonly share: number;
  /** How many shards are in the group. */
  readonly count: number;
  /** Smallest allowed count (0 for none). */
  readonly lower: number;
  /** Largest allowed count (Infinity for none). */
  readonly upper: number;
}

/** How a box probability was obtained, and a bound on its relative error where known. */
export interface BoxProbability {
  /** Natural log of the probability (-Infinity when the box cannot hold N). */
  readonly logProbability: number;
  /** `exact` (convolution or single configuration) or `edgeworth`. */
  readonly method: 'exact' | 'edgeworth' | 'impossible';
  /** Estimated relative error of exp(logProbability). */
  readonly relativeError: number;
}

/** Evaluation options. */
export interface BoxOptions {
  /**
   * Never spend more than the routine budget on an exact answer, accepting the Edgeworth
   * error instead (used while bracketing a quantile; the final answer is re-checked).
   */
  readonly quick?: boolean;
  /**
   * For tail questions: return the first Bonferroni bound S1 (the sum of single-shard
   * tails, an upper bound of the answer, not capped at 1) and nothing else; O(shards) and
   * cheap.
   */
  readonly firstOrder?: boolean;
  /**
   * The caller takes 1 minus this box (a tail by complement): the box's relative error is
   * magnified by Q / (1 - Q) there, and the choice between the exact and the Edgeworth
   * branch weighs the error after that magnification.
   */
  readonly forComplement?: boolean;
  /**
   * Relative error the caller is content with (default 1e-9): an affordable exact
   * convolution is skipped when the Edgeworth expansion's neglected term (after any
   * complement magnification) is already below it.
   */
  readonly tolerance?: number;
  /**
   * Work kept across questions (chance-cache.ts): here the FFT twiddle tables, in
   * shard-extremes.ts the share classes and sweeps. Without one, the default shared by
   * callers that have none.
   */
  readonly cache?: ChanceCache;
}

/** Work above which the exact convolution gives way to the Edgeworth expansion. */
const EXACT_BUDGET = 3e6;
/** Work we accept for an exact answer when the Edgeworth expansion would be inaccurate. */
const EXACT_BUDGET_WHEN_NEEDED = 4e8;
/** Third-order Edgeworth size above which we prefer the exact convolution. */
const EDGEWORTH_TOLERANCE = 1e-5;
/** Default third-order Edgeworth size below which an affordable exact convolution is skipped. */
const EDGEWORTH_NEGLIGIBLE = 1e-9;

interface TiltedGroup {
  readonly group: ShardGroup;
  readonly cut: OneSidedCut;
  readonly logMass: number;
  readonly cumulants: Float64Array;
}

function tiltGroups(groups: readonly ShardGroup[], rate: number): TiltedGroup[] {
  return groups.map((group) => {
    const cut: OneSidedCut = { mean: rate * group.share, lower: group.lower, upper: group.upper };
    const logMass = cutLogMass(cut);
    return { group, cut, logMass, cumulants: cutCumulants(cut, logMass) };
  });
}

function totals(tilted: readonly TiltedGroup[]): { mean: number; variance: number } {
  let mean = 0;
  let variance = 0;
  for (const t of tilted) {
    mean += t.group.count * t.cumulants[0];
    variance += t.group.count * t.cumulants[1];
  }
  return { mean, variance };
}

/**
 * The saddle point: the Poisson rate s at which the cut sum has mean N.
 * Newton's method in log s (d mean / d log s = variance, as for any exponential family),
 * kept inside a bracket that bisection shrinks. O(groups) per step, about 5-20 steps.
 */
function solveRate(groups: readonly ShardGroup[], total: number): TiltedGroup[] {
  let lo = -Infinity;
  let hi = Infinity;
  let logRate = Math.log(total);
  let best = tiltGroups(groups, total);
  for (let step = 0; step < 200; step++) {
    const { mean, variance } = totals(best);
    const gap = total - mean;
    // Within 1e-12 N, and within 1e-6 standard deviations: near the top of W's support
    // (a ceiling just above the fair share at N = 1e15) 1e-12 N is many standard deviations.
    if (Math.abs(gap) <= Math.min(1e-12 * total, 1e-6 * Math.sqrt(variance)) + 1e-14) return best;
    if (gap > 0) lo = logRate;
    else hi = logRate;
    let next = logRate + (variance > 0 ? gap / variance : gap > 0 ? 1 : -1);
    const limit = 5;
    if (next > logRate + limit) next = logRate + limit;
    if (next < logRate - limit) next = logRate - limit;
    if (!(next > lo && next < hi)) {
      next =
        Number.isFinite(lo) && Number.isFinite(hi)
          ? (lo + hi) / 2
          : gap > 0
            ? logRate + 1
            : logRate - 1;
    }
    if (next === logRate) return best;
    logRate = next;
    best = tiltGroups(groups, Math.exp(logRate));
  }
  return best;
}

/** Probabilists' Hermite polynomials He_0..He_12 at z. */
function hermite(z: number): Float64Array {
  const he = new Float64Array(13);
  he[0] = 1;
  he[1] = z;
  for (let n = 1; n < 12; n++) he[n + 1] = z * he[n] - n * he[n - 1];
  return he;
}

/**
 * Local Edgeworth expansion of P(W = N) to second order (terms in cumulants up to the sixth),
 * for an integer-valued W of span 1. Returns log P and the size of the neglected
 * third-order term (estimated by the largest standardised cumulant product of that order).
 */
export function edgeworthLogDensity(
  cumulants: Float64Array,
  at: number,
): { logDensity: number; remainder: number } {
  const variance = cumulants[1];
  const sd = Math.sqrt(variance);
  const z = (at - cumulants[0]) / sd;
  const l3 = cumulants[2] / sd ** 3;
  const l4 = cumulants[3] / sd ** 4;
  const l5 = cumulants[4] / sd ** 5;
  const l6 = cumulants[5] / sd ** 6;
  const he = hermite(z);
  const first = (l3 / 6) * he[3] + (l4 / 24) * he[4] + ((l3 * l3) / 72) * he[6];
  const second =
    (l5 / 120) * he[5] +
    ((l3 * l4) / 144) * he[7] +
    ((l3 * l3 * l3) / 1296) * he[9] +
    (l6 / 720) * he[6] +
    ((l4 * l4) / 1152) * he[8] +
    ((l3 * l5) / 720) * he[8] +
    ((l3 * l3 * l4) / 1728) * he[10] +
    ((l3 * l3 * l3 * l3) / 31104) * he[12];
  const correction = 1 + first + second;
  const scale = Math.max(l3 * l3, Math.abs(l4), Math.sqrt(Math.abs(l6)), Math.abs(l5) ** (2 / 3));
  const remainder = 10 * scale ** 3;
  const logDensity =
    -0.5 * z * z - 0.5 * Math.log(2 * Math.PI * variance) + Math.log(Math.max(correction, 1e-300));
  return { logDensity, remainder: correction > 0 ? remainder : Infinity };
}

/** Both factors longer than this: convolve by FFT instead of directly. */
const FFT_FROM = 256;
/** FFT outputs carry absolute noise near 1e-16 of the peak; anything below this is dropped. */
const FFT_FLOOR = 1e-15;

/** A mass function on consecutive integers starting at `offset`. */
interface Lattice {
  offset: number;
  values: Float64Array;
}

/** Convolution of two lattice mass functions, cut above `maxValue` and pruned of negligible terms. */
function convolve(
  a: Lattice,
  b: Lattice,
  maxValue: number,
  twiddles: (n: number) => Twiddles,
): Lattice {
  const offset = a.offset + b.offset;
  const length = Math.min(a.values.length + b.values.length - 1, maxValue - offset + 1);
  if (length <= 0) return { offset, values: new Float64Array(0) };
  const av = a.values;
  const bv = b.values;
  if (av.length > FFT_FROM && bv.length > FFT_FROM) {
    const full = fftConvolve(av, bv, twiddles);
    return prune(
      { offset, values: full.length > length ? full.slice(0, length) : full },
      FFT_FLOOR,
    );
  }
  const out = new Float64Array(length);
  for (let i = 0; i < av.length && i < length; i++) {
    const x = av[i];
    if (x === 0) continue;
    const end = Math.min(bv.length, length - i);
    for (let j = 0; j < end; j++) out[i + j] += x * bv[j];
  }
  return prune({ offset, values: out });
}

function prune(lattice: Lattice, relativeFloor = 1e-40): Lattice {
  const v = lattice.values;
  let peak = 0;
  for (let i = 0; i < v.length; i++) if (v[i] > peak) peak = v[i];
  const floor = peak * relativeFloor;
  let start = 0;
  let end = v.length;
  while (start < end && v[start] < floor) start++;
  while (end > start && v[end - 1] < floor) end--;
  if (start === 0 && end === v.length) return lattice;
  return { offset: lattice.offset + start, values: v.slice(start, end) };
}

function power(
  base: Lattice,
  exponent: number,
  maxValue: number,
  twiddles: (n: number) => Twiddles,
): Lattice {
  let result: Lattice = { offset: 0, values: Float64Array.of(1) };
  let square = base;
  let e = exponent;
  while (e > 0) {
    if (e & 1) result = convolve(result, square, maxValue, twiddles);
    e = Math.floor(e / 2);
    if (e > 0) square = convolve(square, square, maxValue, twiddles);
  }
  return result;
}

/**
 * P(W = at) exactly: by inverting W's characteristic function at `at` when that is the
 * cheaper (many shards: few frequencies are needed), else by convolving the cut mass
 * functions (repeated squaring within each group, FFT for long factors).
 */
function exactLogDensity(
  tilted: readonly TiltedGroup[],
  at: number,
  twiddles: (n: number) => Twiddles,
): number {
  const pieces: LatticePiece[] = tilted.map((t) => ({
    ...cutMassFunction(t.cut, t.logMass, at),
    count: t.group.count,
  }));
  const convolution = convolutionWorkOf(tilted, at);
  if (inversionWorkOf(tilted, at) < convolution) {
    // W's centre is `at` (the saddle point): the inversion's rounding is relative to the
    // density's peak, so it is used only there. Null when it would cost more than convolving.
    const inverted = sumLogDensityAt(pieces, at, convolution);
    if (inverted !== null) return inverted;
  }
  let result: Lattice = { offset: 0, values: Float64Array.of(1) };
  for (const piece of pieces) {
    result = convolve(result, power(piece, piece.count, at, twiddles), at, twiddles);
  }
  const index = at - result.offset;
  if (index < 0 || index >= result.values.length) return -Infinity;
  return Math.log(result.values[index]);
}

function pieceWidth(sd: number, span: number, at: number): number {
  return Math.min(span, at + 1, Math.ceil(28 * sd + 30));
}

function inversionWorkOf(tilted: readonly TiltedGroup[], at: number): number {
  return inversionWork(
    tilted.map((t) => {
      const sd = Math.sqrt(Math.max(t.cumulants[1], 1e-12));
      return { count: t.group.count, sd, width: pieceWidth(sd, spanOf(t.group), at) };
    }),
  );
}

/** Work of one product of two lattices of these widths (direct, or FFT when both are long). */
function productCost(x: number, y: number): number {
  return x > FFT_FROM && y > FFT_FROM ? 6 * (x + y) * Math.log2(x + y) : x * y;
}

/**
 * Work of the exact branch for groups of `count` pieces of spread `sd` and allowed span
 * `span`: repeated squaring up to each group's width, then one product with the running
 * result. O(groups).
 */
function convolutionWork(
  pieces: Iterable<{ count: number; sd: number; span: number }>,
  at: number,
): number {
  let width = 0;
  let work = 0;
  for (const { count, sd, span } of pieces) {
    const single = pieceWidth(sd, span, at);
    const groupWidth = Math.min(
      at + 1,
      count * single,
      Math.ceil(28 * Math.sqrt(count) * sd) + single,
    );
    work +=
      2 * Math.log2(count + 1) * productCost(groupWidth, groupWidth) +
      productCost(width, groupWidth);
    width = Math.min(at + 1, width + groupWidth);
    if (work > 1e12) return work;
  }
  return work;
}

function spanOf(group: ShardGroup): number {
  return group.upper < Infinity ? group.upper - group.lower + 1 : Infinity;
}

function convolutionWorkOf(tilted: readonly TiltedGroup[], at: number): number {
  return convolutionWork(
    tilted.map((t) => ({
      count: t.group.count,
      sd: Math.sqrt(Math.max(t.cumulants[1], 1e-12)),
      span: spanOf(t.group),
    })),
    at,
  );
}

/** Work of the cheaper exact method. */
function exactWork(tilted: readonly TiltedGroup[], at: number): number {
  return Math.min(convolutionWorkOf(tilted, at), inversionWorkOf(tilted, at));
}

/**
 * A quick estimate of the exact branch's work before the saddle point is solved, with the
 * uncut Poisson spread at rate N standing in for each cut piece's. O(groups). Used to skip
 * asking for an exact box that cannot be afforded (for many distinct shares and large N).
 */
export function exactBoxWorkEstimate(total: number, groups: readonly ShardGroup[]): number {
  return convolutionWork(
    groups
      .filter((g) => g.count > 0 && g.share > 0)
      .map((g) => ({ count: g.count, sd: Math.sqrt(total * g.share), span: spanOf(g) })),
    total,
  );
}

/**
 * The Edgeworth branch from sums already formed elsewhere (the share sweep): Levin's
 * prefactor 1 / P(Poisson(rate) = N), the summed log masses of the cuts and P(W = N) from
 * the summed cumulants of W. `extraError` is the caller's own relative error (added to the
 * Edgeworth remainder). O(1).
 */
export function edgeworthBoxFromSums(
  total: number,
  rate: number,
  logMassSum: number,
  cumulants: Float64Array,
  extraError: number,
): BoxProbability {
  const edgeworth = edgeworthLogDensity(cumulants, total);
  return {
    logProbability: -logPoissonDensity(total, rate) + logMassSum + edgeworth.logDensity,
    method: 'edgeworth',
    relativeError: Math.max(edgeworth.remainder, 1e-12) + extraError,
  };
}

/** The routine budget of the exact branch (for callers deciding whether to ask). */
export const ROUTINE_EXACT_BUDGET = EXACT_BUDGET;

/**
 * Two shards: X_2 = N - X_1, so the box is an interval of one binomial count, computed
 * exactly from two binomial tails (no approximation at any N).
 */
function twoShardBox(total: number, live: readonly ShardGroup[]): BoxProbability {
  const first = live[0];
  const second = live.length > 1 ? live[1] : live[0];
  const low = Math.max(first.lower, total - second.upper);
  const high = Math.min(first.upper, total - second.lower);
  if (low > high) return { logProbability: -Infinity, method: 'impossible', relativeError: 0 };
  const share = first.share / (first.share + second.share);
  // Difference of the two tails on the interval's own side of the mean, so that nothing
  // near 1 is subtracted; 1 minus both tails when the interval straddles the mean.
  const mean = total * share;
  let inside: number;
  if (low > mean) {
    inside = logDifference(
      logBinomialAtLeast(low, total, share),
      logBinomialAtLeast(high + 1, total, share),
    );
  } else if (high < mean) {
    inside = logDifference(
      logBinomialAtMost(high, total, share),
      logBinomialAtMost(low - 1, total, share),
    );
  } else {
    const outside = logAddExp(
      logBinomialAtMost(low - 1, total, share),
      logBinomialAtLeast(high + 1, total, share),
    );
    inside = log1mExp(outside);
  }
  return { logProbability: inside, method: 'exact', relativeError: 1e-12 };
}

/**
 * log P(lower_g <= X_i <= upper_g for every shard i of every group g) under
 * Multinomial(total, shares), with the method used and its estimated relative error.
 *
 * Cost: O(groups) per saddle-point step; the exact branch is limited to about 4e8
 * operations (about a second; only few shards with very many requests need it). Accuracy: the exact branch is limited by rounding (about 1e-13 relative);
 * the Edgeworth branch reports its third-order remainder, below 1e-5 in the regimes where
 * it is chosen over an affordable exact answer.
 * Example: boxLogProbability(23, [{share: 1/365, count: 365, lower: 0, upper: 1}]) is
 * log(0.4927027656760144), the chance that 23 people have 23 different birthdays.
 */
export function boxLogProbability(
  total: number,
  groups: readonly ShardGroup[],
  options: BoxOptions = {},
): BoxProbability {
  const live: ShardGroup[] = [];
  let floorSum = 0;
  let ceilingSum = 0;
  for (const g of groups) {
    if (g.count === 0) continue;
    if (g.share === 0) {
      if (g.lower > 0) return { logProbability: -Infinity, method: 'impossible', relativeError: 0 };
      continue;
    }
    if (g.upper < g.lower)
      return { logProbability: -Infinity, method: 'impossible', relativeError: 0 };
    floorSum += g.count * g.lower;
    ceilingSum += g.count * g.upper;
    live.push(g);
  }
  if (floorSum > total || ceilingSum < total || live.length === 0) {
    const possible = live.length === 0 && total === 0;
    return possible
      ? { logProbability: 0, method: 'exact', relativeError: 0 }
      : { logProbability: -Infinity, method: 'impossible', relativeError: 0 };
  }
  const pinned = floorSum === total ? 'lower' : ceilingSum === total ? 'upper' : null;
  if (pinned !== null) {
    // A single configuration: every shard at its bound. Multinomial probability directly.
    let logP = logFactorial(total);
    for (const g of live) {
      const x = g[pinned];
      logP += g.count * (x * Math.log(g.share) - logFactorial(x));
    }
    return { logProbability: logP, method: 'exact', relativeError: 1e-13 };
  }
  const shardCount = live.reduce((n, g) => n + g.count, 0);
  if (shardCount === 2) return twoShardBox(total, live);
  const tilted = solveRate(live, total);
  let rate = 0;
  let logMassSum = 0;
  const sum = new Float64Array(6);
  for (const t of tilted) {
    logMassSum += t.group.count * t.logMass;
    for (let r = 0; r < 6; r++) sum[r] += t.group.count * t.cumulants[r];
    rate += t.group.count * t.cut.mean;
  }
  // N! / (s^N e^-s) is 1 / P(Poisson(s) = N), computed without cancellation (Loader 2000).
  const logPrefactor = -logPoissonDensity(total, rate);
  const edgeworth = edgeworthLogDensity(sum, total);
  const work = exactWork(tilted, total);
  // Exact when cheap, unless the Edgeworth expansion's neglected term is already below
  // rounding-level noise (then the exact convolution buys nothing and can cost milliseconds).
  const logEstimate = logPrefactor + logMassSum + edgeworth.logDensity;
  const magnification = options.forComplement
    ? Math.exp(logEstimate - log1mExp(Math.min(logEstimate, -1e-300)))
    : 1;
  const exactWanted =
    (work <= EXACT_BUDGET &&
      edgeworth.remainder * magnification > (options.tolerance ?? EDGEWORTH_NEGLIGIBLE)) ||
    (edgeworth.remainder > EDGEWORTH_TOLERANCE &&
      work <= (options.quick ? EXACT_BUDGET : EXACT_BUDGET_WHEN_NEEDED));
  if (exactWanted) {
    const logDensity = exactLogDensity(tilted, total, chanceCacheOr(options.cache).twiddles);
    return {
      logProbability: logPrefactor + logMassSum + logDensity,
      method: 'exact',
      relativeError: 1e-12,
    };
  }
  return {
    logProbability: logPrefactor + logMassSum + edgeworth.logDensity,
    method: 'edgeworth',
    relativeError: Math.max(edgeworth.remainder, 1e-12),
  };
}
