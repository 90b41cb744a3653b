import type { BoxOptions } from './box-probability.js';
import { anyShardTail, type TailProbability, type ThresholdGroup } from './extreme-load.js';
import { sweptShardTail } from './swept-tail.js';
import type { ChanceCache } from './chance-cache.js';
import { shareSweep, thresholdAt, type ShareSweep } from './share-sweep/sorted-shares.js';
import { roundingSlack, shareClasses, type Placement } from './placement.js';

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
 * The breakpoint between lo and hi when the share classes whose threshold changes there all
 * change by one count at the same load (within a relative 1e-12), else null (none, a class
 * moving by more than one count, or breakpoints apart, which the search must separate).
 * Coinciding breakpoints are common: on shares 1 : 2 every load that is a whole count on the
 * first is one on the second, and a search that wanted one class alone stopped a relative
 * 5e-6 above the answer (3.0000147 for 3). O(distinct shares).
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
  const common = new CommonBreakpoint(side);
  for (let g = 0; g < low.length; g++) {
    const expected = placement.total * high[g].share;
    if (!common.add(low[g].threshold, high[g].threshold, expected)) return null;
  }
  return common.found;
}

/** singleBreakpoint over a sweep's sorted shares, without building groups. O(m). */
function sweptSingleBreakpoint(
  sweep: ShareSweep,
  lo: number,
  hi: number,
  side: 'high' | 'low',
): number | null {
  const common = new CommonBreakpoint(side);
  for (let i = 0; i < sweep.shares.length; i++) {
    const expected = sweep.total * sweep.shares[i];
    if (!common.add(thresholdAt(side, lo * expected), thresholdAt(side, hi * expected), expected))
      return null;
  }
  return common.found;
}

/** The one load at which every changed threshold moves, gathered class by class. */
class CommonBreakpoint {
  /** The breakpoint so far (the largest of those within 1e-12 of each other), or null. */
  found: number | null = null;

  constructor(private readonly side: 'high' | 'low') {}

  /** A class's thresholds at the bracket's ends; false once no single breakpoint can hold. */
  add(atLo: number, atHi: number, expected: number): boolean {
    if (atLo === atHi) return true;
    if (Math.abs(atHi - atLo) !== 1) return false;
    const at = this.side === 'high' ? (atHi - 1) / expected : atHi / expected;
    if (this.found === null) this.found = at;
    else if (Math.abs(at - this.found) <= 1e-12 * Math.max(at, this.found))
      this.found = Math.max(at, this.found);
    else return false;
    return true;
  }
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
