import type { BoxOptions } from './box-probability.js';
import {
  anyShardTail,
  sweptShardTail,
  type TailProbability,
  type ThresholdGroup,
} from './extreme-load.js';
import type { ChanceCache } from './chance-cache.js';
import { shareSweep, thresholdAt, type ShareSweep } from './share-sweep/sorted-shares.js';
import { roundingSlack, shareClasses, type Placement } from './placement.js';
import { logDifference } from './log-space.js';
import { logBinomialAtLeast } from './tails.js';

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

function groups(
  placement: Placement,
  relative: number,
  side: 'high' | 'low',
  cache: ChanceCache | undefined,
): ThresholdGroup[] {
  return shareClasses(placement, cache).map((c) => {
    const expected = placement.total * c.share;
    const scaled = relative * expected;
    const threshold =
      side === 'high'
        ? Math.ceil(scaled - roundingSlack(scaled))
        : Math.floor(scaled + roundingSlack(scaled));
    return { share: c.share, count: c.count, threshold };
  });
}

/**
 * P(max_i r_i >= relative) under H0, the fullest-shard p-value when `relative` is the
 * observed maximum. Single-step max-statistic adjusted p-value of a shard with relative load
 * r is fullestTail(placement, r).
 * Cost: O(distinct shares) tails and box probabilities. Error: relative <= 1e-3 on [1e-15, 1].
 * `options.cache` keeps the share classes, sweeps and tables for the next question about
 * the same shares (without one, the default: chance-cache.ts).
 * Example: fullestTail(makePlacement(23, 365), 2 * 365 / 23) = 0.5072972343239857.
 */
export function fullestTail(
  placement: Placement,
  relative: number,
  options: BoxOptions = {},
): TailProbability {
  if (placement.total === 0 || relative <= 0)
    return { logProbability: 0, method: 'certain', relativeError: 0 };
  const sweep = shareSweep(placement, options.cache);
  const swept = sweep && sweptShardTail('high', sweep, relative, options);
  if (swept) return swept;
  const tested = groups(placement, relative, 'high', options.cache);
  return anyShardTail('high', placement.total, tested, options);
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
  const sweep = shareSweep(placement, options.cache);
  const swept = sweep && sweptShardTail('low', sweep, relative, options);
  if (swept) return swept;
  const tested = groups(placement, relative, 'low', options.cache);
  return anyShardTail('low', placement.total, tested, options);
}

/** The largest expected count over the shards: the scale of one count in relative load. */
function unit(placement: Placement, cache: ChanceCache | undefined): number {
  const sweep = shareSweep(placement, cache);
  if (sweep !== null) return 1 / Math.max(placement.total * sweep.shares[0], 1e-300);
  let smallest = Infinity;
  for (const c of shareClasses(placement, cache))
    smallest = Math.min(smallest, placement.total * c.share);
  return 1 / Math.max(smallest, 1e-300);
}

/**
 * Quantile of the fullest shard's relative load: the smallest t with P(max r <= t) >= level,
 * i.e. P(max r > t) <= 1 - level. At level 1 - alpha this is the chance ceiling.
 * For equal shares t * N / m is a whole count: bisection over counts, O(log(range)) tails.
 * For weighted shares a safeguarded regula falsi on the log tail (about 5-15 tails).
 * `cache` as for fullestTail.
 * Example: fullestQuantile(makePlacement(23, 365), 0.5) = 2 * 365 / 23 (the birthday median is a pair).
 */
export function fullestQuantile(placement: Placement, level: number, cache?: ChanceCache): number {
  if (placement.total === 0) return 0;
  // While bracketing an extreme level, the first Bonferroni bound S1 (>= the tail, and
  // within S1^2/2 of it) is close enough and costs one pass over the shards.
  const firstOrder = placement.shares !== null && 1 - level <= FIRST_ORDER_LEVEL;
  const logBound = Math.log1p(-level);
  const logShards = Math.log(placement.shardCount);
  // Above zero while t is below the quantile (the tail still exceeds 1 - level).
  const excess = (quick: boolean) => (t: number) =>
    rootGap(
      logBound,
      fullestTail(placement, t, { quick, firstOrder: quick && firstOrder, cache }).logProbability,
      logShards,
    );
  return searchRelative(placement, excess, 'high', cache);
}

/**
 * Quantile of the emptiest shard's relative load: the smallest u with P(min r <= u) >= level.
 * At level alpha this is the chance floor. Searched as fullestQuantile, `cache` likewise.
 * Example: emptiestQuantile(makePlacement(2, 2), 0.5) = 0.
 */
export function emptiestQuantile(placement: Placement, level: number, cache?: ChanceCache): number {
  if (placement.total === 0) return 0;
  const firstOrder = placement.shares !== null && level <= FIRST_ORDER_LEVEL;
  const logBound = Math.log(level);
  const logShards = Math.log(placement.shardCount);
  // Above zero while u is below the quantile: P(min r <= u) < level.
  const shortfall = (quick: boolean) => (u: number) =>
    -rootGap(
      logBound,
      emptiestTail(placement, u, { quick, firstOrder: quick && firstOrder, cache }).logProbability,
      logShards,
    );
  return searchRelative(placement, shortfall, 'low', cache);
}

/**
 * sqrt(log m - log bound) - sqrt(log m - log tail), signed: positive while the tail is above
 * the bound. The tail of an extreme is about m times one shard's tail, whose log falls
 * about quadratically in the distance from the fair share; so the root of the log of the
 * tail per shard is nearly straight in the load and interpolation converges in a few steps.
 */
function rootGap(logBound: number, logTail: number, logShards: number): number {
  const root = (x: number) => Math.sign(x) * Math.sqrt(Math.abs(x));
  return root(logShards - logBound) - root(logShards - logTail);
}

/** The quick search stops at this relative width (the accurate one starts from there)... */
const QUICK_WIDTH = 1e-6;
/** ...or once an end's root gap is this close to zero. */
const QUICK_GAP = 3e-3;
/**
 * Weighted shares: the answer is one shard's breakpoint, or, where breakpoints crowd closer
 * than this relative width, the upper end of a bracket this narrow (an upper bound of the
 * quantile; 0.1 request at a fair share of 10 000). With 1e5 shards and N = 1e9 a few
 * shards carry the tail and each of their threshold steps moves it by about 0.5%, so no
 * estimate is better than about 2e-5 there and every halving below that costs a full pass.
 */
const ANSWER_WIDTH = 1e-5;
/**
 * ...and never wider than this many standard deviations of the most concentrated shard's
 * relative load (1 / sqrt(N p_max)): from N p = 1e4 on, a relative 1e-5 is more than 1e-3
 * of them, and at N = 3e15 on 3 shards it was 200 of them, which put the floor above 1.
 */
const ANSWER_DEVIATIONS = 1e-3;
/** The quick phase's width in the same units (QUICK_WIDTH relative until N p = 1e4). */
const QUICK_DEVIATIONS = 1e-4;

/**
 * Smallest relative load t at which `gap(t)` stops being positive, where gap falls with t
 * (positive below the answer). For equal shares the answer is a whole count; for weighted
 * shares it is the breakpoint of one shard's threshold, or located to a relative 1e-5
 * where breakpoints crowd closer than that.
 */
function searchRelative(
  placement: Placement,
  makeGap: (quick: boolean) => (t: number) => number,
  side: 'high' | 'low',
  cache: ChanceCache | undefined,
): number {
  // Bracket and narrow with quick evaluations, then settle with full accuracy.
  const quickGap = makeGap(true);
  const accurateGap = makeGap(false);
  const before = (t: number) => quickGap(t) > 0;
  const accurate = (t: number) => accurateGap(t) > 0;
  const step = unit(placement, cache);
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
  const floorT = side === 'high' ? 1 : 0;
  // Widths in relative load: relative to t, capped by standard deviations (ANSWER_DEVIATIONS).
  const answerWidth = (t: number) =>
    Math.min(ANSWER_WIDTH * t, ANSWER_DEVIATIONS * Math.sqrt(step));
  const quickWidth = (t: number) => Math.min(QUICK_WIDTH * t, QUICK_DEVIATIONS * Math.sqrt(step));
  // First guess from the normal law of the most spread shard, z = sqrt(2 ln(1000 m)) standard
  // deviations out (a family-wise level near 1e-3); the bracket grows from there if needed.
  const guess = Math.sqrt(2 * Math.log(1000 * placement.shardCount) * step);
  const b: Bracket = {
    lo: floorT,
    hi: 1,
    gapLo: NaN,
    gapHi: NaN,
    latest: 0,
    stalls: 0,
    recent: [],
  };
  const quick = (t: number) => probe(quickGap, b, t);
  if (side === 'high') {
    b.hi = 1 + Math.max(step, guess);
    b.gapHi = quick(b.hi);
    // The second point also in the tail, where the gap is nearly straight; t = 1 (the
    // fair share, always reached) only when that is still past the answer.
    const inner = 1 + 0.6 * (b.hi - 1);
    const gapInner = b.gapHi > 0 ? NaN : quick(inner);
    if (gapInner > 0) {
      b.lo = inner;
      b.gapLo = gapInner;
    } else if (b.gapHi <= 0) {
      b.hi = inner;
      b.gapHi = gapInner;
      b.gapLo = quick(1);
    } else b.gapLo = quick(1);
    while (b.gapHi > 0) {
      b.lo = b.hi;
      b.gapLo = b.gapHi;
      b.hi = 1 + 2 * (b.hi - 1);
      if (b.hi > 1e12) break;
      b.gapHi = quick(b.hi);
    }
  } else {
    b.gapLo = quick(0);
    if (!(b.gapLo > 0)) return 0;
    // As on the high side: two points in the tail first, u = 1 only when both are short.
    const low = Math.max(0, 1 - guess);
    const gapLow = low > 0 ? quick(low) : b.gapLo;
    if (gapLow > 0) {
      b.lo = low;
      b.gapLo = gapLow;
      const inner = 1 - 0.6 * (1 - low);
      const gapInner = quick(inner);
      if (gapInner > 0) {
        b.lo = inner;
        b.gapLo = gapInner;
        b.hi = 1;
        b.gapHi = quick(1);
      } else {
        b.hi = inner;
        b.gapHi = gapInner;
      }
    } else {
      b.hi = low;
      b.gapHi = gapLow;
    }
  }
  // The quick phase stops at a narrow bracket, or once the latest point is within QUICK_GAP of
  // the bound (root units: about 2% of the tail at level 1e-3; the true gap, not an end's,
  // which Anderson-Bjorck steps rescale): closer than that the quick bound is no better than
  // the accurate phase that follows, and with many shards its steps are noise.
  for (
    let i = 0;
    i < 200 &&
    b.hi - b.lo > quickWidth(b.hi) &&
    !(Math.abs(b.recent[0]?.gap ?? Infinity) < QUICK_GAP);
    i++
  )
    narrowOnce(quickGap, b);
  // Full accuracy from the quick answer: the secant root of the last two quick points
  // (the accurate gap runs parallel to the quick one, which is the first Bonferroni bound,
  // off by about the level itself). Steps away from it double until the accurate gap changes
  // sign, starting at half of ANSWER_WIDTH, so a good estimate settles in two passes.
  const [p, q] = b.recent;
  const secant =
    q !== undefined && p.gap !== q.gap ? p.t - (p.gap * (p.t - q.t)) / (p.gap - q.gap) : NaN;
  // Otherwise the evaluated point nearest the root (the ends' gaps may be rescaled).
  const nearest = q !== undefined && Math.abs(q.gap) < Math.abs(p.gap) ? q : p;
  const estimate = secant > b.lo && secant < b.hi ? secant : nearest.t;
  b.recent = [];
  b.latest = 0;
  b.stalls = 0;
  const settle = (t: number) => probe(accurateGap, b, t);
  const gapEstimate = settle(estimate);
  let stride = answerWidth(estimate) / 2;
  // Outward from the estimate (up while the gap is positive, else down) until it changes sign.
  const up = gapEstimate > 0;
  let inner = estimate;
  let gapInner = gapEstimate;
  for (;;) {
    const t = up ? inner + stride : Math.max(floorT, inner - stride);
    const g = settle(t);
    if (up ? !(g > 0) : g > 0 || t === floorT) {
      if (up) Object.assign(b, { lo: inner, gapLo: gapInner, hi: t, gapHi: g });
      else Object.assign(b, { lo: t, gapLo: g, hi: inner, gapHi: gapInner });
      break;
    }
    inner = t;
    gapInner = g;
    stride *= 2;
  }
  // The tail only changes where some t N p_i is a whole count: narrow until exactly one
  // shard's threshold changes between the ends; the answer is then its breakpoint.
  // With many shards the breakpoints crowd (N of them per unit of t), so the search stops
  // once the bracket is below a relative ANSWER_WIDTH and returns its upper end, the
  // smallest load known to satisfy the level.
  for (let round = 0; round < 100; round++) {
    const breakpoint = singleBreakpoint(placement, b.lo, b.hi, side, cache);
    if (breakpoint !== null) return breakpoint;
    if (b.hi - b.lo <= answerWidth(b.hi)) break;
    narrowOnce(accurateGap, b);
  }
  return b.hi;
}

/**
 * The breakpoint between lo and hi when exactly one share class changes its threshold there
 * (by one count), else null (none or several). O(distinct shares).
 */
function singleBreakpoint(
  placement: Placement,
  lo: number,
  hi: number,
  side: 'high' | 'low',
  cache: ChanceCache | undefined,
): number | null {
  // About N (hi - lo) thresholds change in the bracket (sum_i N p_i (hi - lo)); with more
  // than 64 expected, one alone has a chance below e^-60.
  if (placement.total * (hi - lo) > 64) return null;
  const sweep = shareSweep(placement, cache);
  if (sweep !== null) return sweptSingleBreakpoint(sweep, lo, hi, side);
  const low = groups(placement, lo, side, cache);
  const high = groups(placement, hi, side, cache);
  let changed = -1;
  for (let g = 0; g < low.length; g++) {
    if (low[g].threshold !== high[g].threshold) {
      if (changed >= 0) return null;
      changed = g;
    }
  }
  if (changed < 0 || Math.abs(high[changed].threshold - low[changed].threshold) !== 1) return null;
  const expected = placement.total * high[changed].share;
  return side === 'high'
    ? (high[changed].threshold - 1) / expected
    : high[changed].threshold / expected;
}

/** singleBreakpoint over a sweep's sorted shares, without building groups. O(m). */
function sweptSingleBreakpoint(
  sweep: ShareSweep,
  lo: number,
  hi: number,
  side: 'high' | 'low',
): number | null {
  let found: number | null = null;
  for (let i = 0; i < sweep.shares.length; i++) {
    const expected = sweep.total * sweep.shares[i];
    const a = thresholdAt(side, lo * expected);
    const b = thresholdAt(side, hi * expected);
    if (a === b) continue;
    if (found !== null || Math.abs(b - a) !== 1) return null;
    found = side === 'high' ? (b - 1) / expected : b / expected;
  }
  return found;
}

/** A bracket [lo, hi] of a falling gap: gap(lo) > 0 >= gap(hi). */
interface Bracket {
  lo: number;
  hi: number;
  gapLo: number;
  gapHi: number;
  /** Which end the latest point replaced (1 high, -1 low, 0 none yet). */
  latest: number;
  /** Consecutive steps that did not halve the gap. */
  stalls: number;
  /** The last two points evaluated, newest first (true gaps, unlike the rescaled ends). */
  recent: { t: number; gap: number }[];
}

/** The gap at t, remembered as the bracket's newest point. */
function probe(gap: (t: number) => number, b: Bracket, t: number): number {
  const value = gap(t);
  b.recent.unshift({ t, gap: value });
  b.recent.length = Math.min(b.recent.length, 2);
  return value;
}

/**
 * One step of a safeguarded secant search. The secant through the two latest points is
 * taken when it lands inside the bracket (order about 1.6 where the gap is smooth, from
 * either side); otherwise regula falsi with the Anderson-Bjorck modification (Anderson and
 * Bjorck 1973, "A new high order method of regula falsi type", BIT 13: when the new point
 * lands on the same side as the previous one, the kept end's gap is scaled by
 * 1 - g_new / g_previous). Where gaps are not finite, or two steps in a row failed to halve
 * the gap (the tail is a coarse step function there: few shards), the step is a bisection.
 * One gap per step.
 */
function narrowOnce(gap: (t: number) => number, b: Bracket): void {
  const width = b.hi - b.lo;
  let mid = (b.lo + b.hi) / 2;
  const inside = (t: number) => t > b.lo && t < b.hi;
  if (b.stalls < 2) {
    const [p, q] = b.recent;
    const secant =
      q !== undefined && p.gap !== q.gap ? p.t - (p.gap * (p.t - q.t)) / (p.gap - q.gap) : NaN;
    if (inside(secant)) mid = secant;
    else if (Number.isFinite(b.gapLo) && Number.isFinite(b.gapHi) && b.gapLo > b.gapHi) {
      const falsi = b.lo + width * (b.gapLo / (b.gapLo - b.gapHi));
      if (inside(falsi)) mid = falsi;
    }
  }
  const value = probe(gap, b, mid);
  if (value > 0) {
    if (b.latest === -1) {
      const m = 1 - value / b.gapLo;
      b.gapHi *= m > 0 ? m : 0.5;
    }
    b.lo = mid;
    b.gapLo = value;
    b.latest = -1;
  } else {
    if (b.latest === 1) {
      const m = 1 - value / b.gapHi;
      b.gapLo *= m > 0 ? m : 0.5;
    }
    b.hi = mid;
    b.gapHi = value;
    b.latest = 1;
  }
  // A stall: the step did not halve the gap of the point before it.
  const before = b.recent[1];
  b.stalls =
    before !== undefined && !(Math.abs(value) <= 0.5 * Math.abs(before.gap)) ? b.stalls + 1 : 0;
}

/**
 * Expected relative load of the fullest shard, E[max r]. For equal shares
 * E[max x] = sum_{k>=1} P(max x >= k), summed over the counts from the fair share (the
 * fullest shard holds at least that) to where the tail is negligible: count by count over
 * up to 256 counts, else by the trapezoid rule on a lattice of whole counts, halving the
 * step until two steps agree to 1e-9 of the mean (see integrateTail). Weighted shares:
 * the integral of the tail over the relative load from 1 to its 1 - 1e-6 quantile, step by
 * step where it has up to 1024 steps, else by the monotone trapezoid rule (integrateTail:
 * within about 1e-5 of the mean at N / m = 100, 1e-7 from N / m = 1e4), and beyond that
 * quantile S1's integral in closed form; `cache` as for fullestTail. Example:
 * fullestMean(makePlacement(2, 2)) = 1.5 / 1 (counts 1.5).
 */
export function fullestMean(placement: Placement, cache?: ChanceCache): number {
  if (placement.total === 0) return 0;
  const tail = (t: number) => Math.exp(fullestTail(placement, t, { cache }).logProbability);
  if (placement.shares === null) {
    const top = fullestQuantile(placement, 1 - 1e-15, cache);
    return 1 + integrateTail(placement, tail, 1, top, 'high', cache);
  }
  // Weighted: past the 1 - 1e-6 quantile the tail is S1, the sum of the single tails, to
  // within S1^2 / 2 (Bonferroni), and S1's integral has a closed form (farTailIntegral).
  // A tiny share far out (a shard of 1e-9 of the traffic holding one request reads as a
  // relative load of 1e9 / N) then costs nothing, where a rule over the whole range missed it.
  const cut = fullestQuantile(placement, 1 - FAR_TAIL, cache);
  // The body up to the cut by the monotone rule (integrateTail), whose points go where the
  // tail falls: a drop near the fair share and big steps of tiny shares far out alike.
  const body = integrateTail(placement, tail, 1, cut, 'high', cache);
  return 1 + body + farTailIntegral(placement, cut, cache);
}

/** Where the fullest mean's integral switches to S1 (a tail of 1e-6: S1 within 5e-7 of it). */
const FAR_TAIL = 1e-6;

/**
 * The integral of S1(t) = sum_i P(X_i >= c_i(t)) over t > cut, X_i ~ Binomial(N, p_i),
 * c_i(t) the threshold of relative load t: for each shard, (k0 / (N p_i) - cut) P(X_i >= k0)
 * for the stretch up to its first step k0 = c_i(cut), then P(X_i >= k) / (N p_i) a count;
 * and sum_{k > k0} P(X >= k) = E[(X - k0)^+] = N p P(Binomial(N - 1, p) >= k0) -
 * k0 P(X >= k0 + 1) (E[X 1{X >= a}] = N p P(Binomial(N - 1, p) >= a - 1), common practice).
 */
function farTailIntegral(
  placement: Placement,
  cut: number,
  cache: ChanceCache | undefined,
): number {
  const total = placement.total;
  let sum = 0;
  for (const c of shareClasses(placement, cache)) {
    const expected = total * c.share;
    if (!(expected > 0)) continue;
    const k0 = Math.max(1, thresholdAt('high', cut * expected));
    if (k0 > total) continue;
    const first = (k0 / expected - cut) * Math.exp(logBinomialAtLeast(k0, total, c.share));
    const logCarried = Math.log(expected) + logBinomialAtLeast(k0, total - 1, c.share);
    const logBeyond = Math.log(k0) + logBinomialAtLeast(k0 + 1, total, c.share);
    const excess = logCarried > logBeyond ? Math.exp(logDifference(logCarried, logBeyond)) : 0;
    sum += c.count * (Math.max(0, first) + excess / expected);
  }
  return sum;
}

/**
 * Expected relative load of the emptiest shard, E[min r] = integral of P(min r > u) over
 * [0, 1], from its 1e-15 quantile up (below it the integrand is 1 within 1e-15); summed
 * over whole counts for equal shares, by the trapezoid rule for weighted ones, as
 * fullestMean.
 * Example: emptiestMean(makePlacement(2, 2)) = 0.5 (counts 0.5).
 */
export function emptiestMean(placement: Placement, cache?: ChanceCache): number {
  if (placement.total === 0) return 0;
  const bottom = emptiestQuantile(placement, 1e-15, cache);
  const survival = (u: number) => -Math.expm1(emptiestTail(placement, u, { cache }).logProbability);
  return bottom + integrateTail(placement, survival, bottom, 1, 'low', cache);
}

/** Counts summed one by one up to this many; beyond, the trapezoid rule. */
const COUNT_BY_COUNT = 256;
/** Agreement of two successive step halvings, relative to the mean, that ends the rule. */
const MEAN_TOLERANCE = 1e-9;
/** The most steps of the rule on weighted shares, and its tolerance (see integrateTail). */
const WEIGHTED_STEPS = 256;
const WEIGHTED_TOLERANCE = 5e-6;

/**
 * The trapezoid rule T(h) over [from, to] on points `value(i, n)`, i = 0..n, starting with
 * 16 steps and halving the step (reusing every point) until `limit` steps at most. The
 * successive T(h) are carried to the step `target` (0 for an integral; the lattice's own
 * step for a sum over whole counts, where the sum is T(1) plus half of each end) by
 * polynomial extrapolation in h^2 through the last three (Neville): the Euler-Maclaurin
 * formula has T(h) = T(0) + c1 h^2 + c2 h^4 + ..., whose terms come from the derivatives at
 * the ends. Between its two negligible ends the tail is flat and the terms vanish (T(h) is
 * then accurate far beyond any power of h); two or three shards put a corner at the fair
 * share (the fullest shard holds at least that), which the extrapolation takes out. Stops
 * when two successive estimates agree within `tolerance`; about 30-130 points.
 */
function halvingTrapezoid(
  value: (i: number, n: number) => number,
  limit: number,
  target: number,
  tolerance: (estimate: number) => number,
): number {
  let n = Math.min(16, limit);
  let inner = 0;
  for (let i = 1; i < n; i++) inner += value(i, n);
  const ends = (value(0, n) + value(n, n)) / 2;
  const steps: number[] = [1 / n];
  const rules: number[] = [(ends + inner) / n];
  let estimate = rules[0];
  while (2 * n <= limit) {
    for (let i = 1; i < 2 * n; i += 2) inner += value(i, 2 * n);
    n *= 2;
    steps.push(1 / n);
    rules.push((ends + inner) / n);
    const last = rules.length - 1;
    // The rule itself settles first where the tail is flat at both ends; the extrapolated
    // estimate where an end has a corner.
    if (Math.abs(rules[last] - rules[last - 1]) <= tolerance(rules[last])) {
      estimate = rules[last];
      break;
    }
    const next = neville(steps.slice(-3), rules.slice(-3), target);
    const agreed = last >= 2 && Math.abs(next - estimate) <= tolerance(next);
    estimate = next;
    if (agreed) break;
  }
  return estimate;
}

/** The polynomial in h^2 through (h_i, y_i), evaluated at h = target (Neville's scheme). */
function neville(h: readonly number[], y: readonly number[], target: number): number {
  const x = h.map((step) => step * step);
  const at = target * target;
  const p = [...y];
  for (let level = 1; level < p.length; level++) {
    for (let i = p.length - 1; i >= level; i--) {
      p[i] = ((at - x[i - level]) * p[i] - (at - x[i]) * p[i - 1]) / (x[i] - x[i - level]);
    }
  }
  return p[p.length - 1];
}

function integrateTail(
  placement: Placement,
  tail: (t: number) => number,
  from: number,
  to: number,
  side: 'high' | 'low',
  cache: ChanceCache | undefined,
): number {
  if (!(to > from)) return 0;
  if (placement.shares === null) {
    const fair = placement.total / placement.shardCount;
    // high: P(max >= k); low: P(min >= k) = 1 - P(min <= k - 1)
    const at = (k: number) => (side === 'high' ? tail(k / fair) : tail((k - 1) / fair));
    // Counts strictly above `from` up to `to`, in counts.
    const first = Math.round(from * fair) + 1;
    const last = Math.round(to * fair);
    if (last - first + 1 <= COUNT_BY_COUNT) {
      let sum = 0;
      for (let k = first; k <= last; k++) sum += at(k);
      return sum / fair;
    }
    // A lattice of whole counts: 16 steps of a power of two counts, from `first` up (the
    // fullest shard: past `last`, the 1 - 1e-15 quantile, the tail is negligible) or from
    // `last` down (the emptiest shard: below `first` the tail is 1 within 1e-15, and 1 from
    // count 0 down), so that the fair share, where two or three shards put a corner in the
    // tail, is an end of the lattice; halved down to steps of one count at most.
    const coarsest = 2 ** Math.ceil(Math.log2((last - first) / 16));
    const span = 16 * coarsest;
    const start = side === 'high' ? first : last - span;
    const sum = halvingTrapezoid(
      (i, n) => at(start + (i * span) / n),
      span,
      // Steps in units of the whole lattice: one count is 1 / span.
      1 / span,
      // The points' mean times span is the sum in counts: its tolerance over span.
      (estimate) => (MEAN_TOLERANCE * (from * fair + estimate * span)) / span,
    );
    // The sum over counts is the trapezoid rule at a step of one count plus half of each
    // end (a sum holds its ends whole): span x (mean of the points) + (ends) / 2; for the
    // emptiest shard less the counts below `first`, each worth 1.
    const counts = sum * span + (at(start) + at(start + span)) / 2 - (first - start);
    return counts / fair;
  }
  const stepwise = staircaseIntegral(placement, tail, from, to, cache);
  if (stepwise !== null) return stepwise;
  // Weighted shares: every shard's tail steps at its own whole counts, k / (N p_i), so the
  // integrand is a staircase with up to m times the counts in range steps: the rule
  // converges only like the step times their spread, not like h^2 (a tolerance of 1e-9 was
  // never met and every mean took 1025 tails, 35 s for 1e5 shares), and a drop narrower
  // than the step (a few shards' bulk next to a tiny share's far steps) is missed whatever
  // the halving. So: the uniform rule to 64 steps, and where 32 and 64 steps disagree,
  // steps added where the tail falls most (monotoneTrapezoid).
  return monotoneTrapezoid(
    tail,
    from,
    to,
    (estimate) => WEIGHTED_TOLERANCE * (from + estimate),
    WEIGHTED_STEPS,
  );
}

/**
 * The trapezoid rule for a monotone integrand f on [from, to], read at no more than
 * `budget` + 1 points. On a cell of width w the rule is off by at most |f(a) - f(b)| w / 2
 * (f lies between its end values). First 16, 32 and 64 equal cells; if the last two rules
 * agree within `tolerance`, that is the answer (a smooth tail: measured against 4096 steps,
 * within 1e-7 of the mean from N / m = 1e4). Otherwise the cell with the largest bound is
 * halved, one point at a time, until the bounds add up to the tolerance or the budget is
 * spent: the points go where the tail falls. Measured against 4096 uniform steps and numpy
 * Monte Carlo: within about 1e-5 of the mean at N / m = 100 on 1e4 shares (the staircase's
 * own scatter), and a drop 0.002 wide beside steps 1 apart found to 1e-6.
 */
function monotoneTrapezoid(
  f: (t: number) => number,
  from: number,
  to: number,
  tolerance: (estimate: number) => number,
  budget: number,
): number {
  const xs: number[] = [];
  const ys: number[] = [];
  const width = to - from;
  for (let i = 0; i <= 16; i++) {
    xs.push(from + (width * i) / 16);
    ys.push(f(xs[i]));
  }
  const rule = () => {
    let sum = 0;
    for (let i = 0; i + 1 < xs.length; i++) sum += ((ys[i] + ys[i + 1]) / 2) * (xs[i + 1] - xs[i]);
    return sum;
  };
  // Halve every cell: the points in order, the new ones read at the middles.
  const halveAll = () => {
    const n = xs.length - 1;
    for (let i = n - 1; i >= 0; i--) {
      const x = (xs[i] + xs[i + 1]) / 2;
      xs.splice(i + 1, 0, x);
      ys.splice(i + 1, 0, f(x));
    }
  };
  halveAll();
  let before = rule();
  halveAll();
  let estimate = rule();
  if (Math.abs(estimate - before) <= tolerance(estimate)) return estimate;
  while (xs.length - 1 < budget) {
    let worst = 0;
    let worstBound = -1;
    let bounds = 0;
    for (let i = 0; i + 1 < xs.length; i++) {
      const bound = (Math.abs(ys[i] - ys[i + 1]) * (xs[i + 1] - xs[i])) / 2;
      bounds += bound;
      if (bound > worstBound) {
        worstBound = bound;
        worst = i;
      }
    }
    if (bounds <= tolerance(estimate)) break;
    const x = (xs[worst] + xs[worst + 1]) / 2;
    if (!(x > xs[worst] && x < xs[worst + 1])) break;
    xs.splice(worst + 1, 0, x);
    ys.splice(worst + 1, 0, f(x));
    before = estimate;
    estimate = rule();
  }
  return estimate;
}

/** Up to this many steps of the tail in range, the weighted mean sums them one by one. */
const STAIRCASE_STEPS = 1024;

/**
 * For weighted shares, the integral of `tail` over [from, to] step by step: each shard's
 * threshold is a whole count that changes only at k / (N p_i), so between two neighbouring
 * such loads the tail is constant and is read once, at the middle. Exact up to the tails'
 * own error; null when the range holds more than STAIRCASE_STEPS steps (then the trapezoid
 * rule). This is what few shards need: there each step is large, and the rule on 1024
 * points was off by up to 2e-4 of the mean (3 shards, N = 300).
 */
function staircaseIntegral(
  placement: Placement,
  tail: (t: number) => number,
  from: number,
  to: number,
  cache: ChanceCache | undefined,
): number | null {
  const points: number[] = [from, to];
  for (const c of shareClasses(placement, cache)) {
    const expected = placement.total * c.share;
    if (!(expected > 0)) continue;
    const first = Math.ceil(from * expected);
    // No shard holds more than N: its threshold past N no longer moves the tail.
    const last = Math.min(Math.floor(to * expected), placement.total);
    if (last - first + 1 > STAIRCASE_STEPS + 2 - points.length) return null;
    for (let k = first; k <= last; k++) {
      const t = k / expected;
      if (t > from && t < to) points.push(t);
    }
  }
  points.sort((a, b) => a - b);
  let sum = 0;
  for (let j = 0; j + 1 < points.length; j++) {
    const a = points[j];
    const b = points[j + 1];
    if (b > a) sum += (b - a) * tail((a + b) / 2);
  }
  return sum;
}
