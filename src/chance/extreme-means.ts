/**
 * Means of the fullest and emptiest shards' relative loads under random placement: the
 * integral of their tails (shard-extremes.ts) over the relative load. For equal shares a
 * sum over whole counts; for weighted ones the tail steps at every shard's own counts, and
 * the integral is taken step by step, by a monotone trapezoid rule, and past the far
 * quantile in closed form (see each function; the method and its checks: docs/methods.md).
 */
import type { ChanceCache } from './chance-cache.js';
import { logDifference } from './log-space.js';
import { shareClasses, type Placement } from './placement.js';
import { thresholdAt } from './share-sweep/sorted-shares.js';
import { emptiestQuantile, emptiestTail, fullestQuantile, fullestTail } from './shard-extremes.js';
import { logBinomialAtLeast } from './tails.js';

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
  const before = rule();
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
