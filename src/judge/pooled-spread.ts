import { pgamma, pnbinom, qnbinom, qt } from 'lib-r-math.js';
import { select } from './dispersion-scaling.js';

/**
 * The cluster's usual spread, learned over recent windows: the over-dispersion phi by
 * which per-shard counts vary more than random placement makes them (variance phi x the
 * multinomial's), pooled over time so that it is seen where one window cannot show it.
 *
 * Statistic: each shard's normalised squared residual in a window,
 *   r_i = (x_i - N p_i)^2 / (N p_i (1 - p_i)),
 * whose mean is exactly 1 under random placement (the multinomial variance of x_i is
 * N p_i (1 - p_i)) and about phi when counts are over-dispersed by phi. A mean, not a
 * median: the median of a window's residuals sits on one of a few distinct values when
 * most counts are 0 or 1 and reads phi near 1 whatever the truth, while the mean stays
 * unbiased at any count (it is the moment estimator X^2 / (m - 1) for equal shares).
 *
 * Pooling: per shard, exponentially weighted sums of r_i over the learned windows (span
 * convention of common practice: weight factor 1 - 2 / (span + 1) per window, as the
 * baseline null), so one shard's pooled mean M_i is its own over-dispersion over time.
 *
 * Robust to the shards under suspicion: the judge leaves a window's hot and cold
 * candidates out when it learns the window, and the estimate leaves out shards whose pooled
 * mean stands out from the others (more than {@link outlierSds} standard deviations above
 * the mean of the rest, repeated until none does; at most 0.75 sqrt(k - 1) for k shards,
 * since with k values one outlier can stand at most sqrt(k - 1) deviations out), or more
 * than 2.5 of them and far above the median by a robust measure (several hot shards
 * together hide one another from the standard deviation). A fresh
 * hotspot weighs 1 / span of its shard's pooled mean, a lasting one is left out.
 *
 * Uncertainty: the estimate phi = sum S_i / sum W_i over the kept shards; its standard
 * error from the spread of the shards' pooled means (the shards are the independent units,
 * so heavy-tailed residuals at low counts widen it as they should), and the bound the judge
 * uses is the upper end of a two-sided 95% Student t interval with k - 1 degrees of freedom
 * (lib-r-math.js qt, R's qt): phi_upper = phi + t_{0.975, k-1} se. A t-like widening,
 * stated: it treats the shards' pooled means as independent and equally informative.
 *
 * Libraries: the selections behind the median and MAD are simple-statistics' quickselect
 * (through {@link select}). Its median and medianAbsoluteDeviation are not used: both average
 * the two middle values of an even count (R type 7), where this line takes the upper middle
 * value, and the change would move the robust line and with it which shards are left out.
 * Written here because simple-statistics has none of them: the exponentially weighted
 * pooled sums, phi = sum S_i / sum W_i (its weightedMean of the M_i with weights W_i is the
 * same quantity in other rounding), the unweighted spread of the M_i about that weighted phi
 * over k - 1 (its sampleStandardDeviation centres on the plain mean, its
 * weightedStandardDeviation weighs by W_i over sum W_i) and the standard error of a weighted
 * mean of unit means; the t quantile comes from lib-r-math.js, simple-statistics has none.
 * O(m) per window (a few passes when shards are left out).
 */

/** Standard deviations above the rest that leave a shard's pooled mean out (our choice, stated). */
export const outlierSds = 5;
/**
 * Or: more than {@link leastSds} standard deviations above the rest and above both
 * {@link robustMedians} x the median and the median + {@link robustMads} scaled MADs of the
 * shards' pooled means (scaled MAD: 1.4826 x MAD, consistent for the normal sd). Our choices.
 */
const leastSds = 2.5;
const robustMedians = 4;
const robustMads = 8;

export interface SpreadEstimate {
  /** Pooled phi over the kept shards; 1 before anything is learned. */
  readonly phi: number;
  /** Upper end of the 95% t interval of phi (what the judge divides by). */
  readonly upper: number;
  /** Lower end of the same interval. */
  readonly lower: number;
  /** Windows learned so far. */
  readonly windows: number;
  /** Shards left out as standing out from the others. */
  readonly leftOut: number;
}

export class PooledSpread {
  private readonly decay: number;
  private sums = new Float64Array(0);
  private weights = new Float64Array(0);
  private kept = new Uint8Array(0);
  private scratch = new Float64Array(0);
  private learned = 0;

  /**
   * @param spanWindows span of the exponential weights, in windows (>= 1)
   */
  constructor(spanWindows: number) {
    this.decay = 1 - 2 / (spanWindows + 1);
  }

  /** Windows learned so far. */
  get learnedWindows(): number {
    return this.learned;
  }

  /**
   * Learns one window: counts against shares (null: equal) with total N; shards whose
   * `leftOut` flag is set add nothing (their weights still decay). O(m).
   */
  learn(
    counts: ArrayLike<number>,
    total: number,
    shares: Float64Array | null,
    leftOut: ReadonlySet<number>,
  ): void {
    const m = counts.length;
    if (total <= 0 || m < 2) return;
    this.ensure(m);
    const decay = this.decay;
    for (let shard = 0; shard < m; shard++) {
      this.sums[shard] *= decay;
      this.weights[shard] *= decay;
      if (leftOut.has(shard)) continue;
      const share = shares === null ? 1 / m : shares[shard];
      if (!(share > 0 && share < 1)) continue;
      const expected = total * share;
      const d = counts[shard] - expected;
      this.sums[shard] += (d * d) / (expected * (1 - share));
      this.weights[shard] += 1;
    }
    this.learned++;
  }

  /** The pooled estimate over the first m shards. O(m) per pass. */
  estimate(m: number): SpreadEstimate {
    this.ensure(m);
    const sums = this.sums;
    const weights = this.weights;
    const kept = this.kept;
    let candidates = 0;
    for (let shard = 0; shard < m; shard++) {
      kept[shard] = weights[shard] > 0 ? 1 : 0;
      candidates += kept[shard];
    }
    if (candidates < 2) {
      return { phi: 1, upper: Infinity, lower: 0, windows: this.learned, leftOut: 0 };
    }
    // A robust line beside the classical one: several shards standing out together inflate
    // the standard deviation and hide one another from it, not from the median and MAD.
    if (this.scratch.length < m) this.scratch = new Float64Array(m);
    let used = 0;
    for (let shard = 0; shard < m; shard++) {
      if (kept[shard] === 1) this.scratch[used++] = sums[shard] / weights[shard];
    }
    const median = select(this.scratch, used, used >> 1);
    for (let i = 0; i < used; i++) this.scratch[i] = Math.abs(this.scratch[i] - median);
    const mad = select(this.scratch, used, used >> 1);
    const robustLine = Math.max(robustMedians * median, median + robustMads * 1.4826 * mad);
    let leftOut = 0;
    let phi = 1;
    let se = 0;
    let count = candidates;
    for (let pass = 0; pass < 20; pass++) {
      // Weighted mean of the kept shards' pooled means, and their spread.
      let sumS = 0;
      let sumW = 0;
      for (let shard = 0; shard < m; shard++) {
        if (kept[shard] === 0) continue;
        sumS += sums[shard];
        sumW += weights[shard];
      }
      phi = sumS / sumW;
      let spread = 0;
      let plain = 0;
      for (let shard = 0; shard < m; shard++) {
        if (kept[shard] === 0) continue;
        const d = sums[shard] / weights[shard] - phi;
        spread += weights[shard] * weights[shard] * d * d;
        plain += d * d;
      }
      // se of a weighted mean of independent unit means (weights W_i): sqrt(sum W_i^2 d_i^2) / sum W_i,
      // with the k / (k - 1) small-sample factor.
      se = Math.sqrt((spread * count) / (count - 1)) / sumW;
      const sd = Math.sqrt(plain / (count - 1));
      const limit = Math.min(outlierSds, 0.75 * Math.sqrt(count - 1));
      let dropped = 0;
      for (let shard = 0; shard < m; shard++) {
        if (kept[shard] === 0) continue;
        const z = sd > 0 ? (sums[shard] / weights[shard] - phi) / sd : 0;
        if (z > limit || (z > leastSds && sums[shard] / weights[shard] > robustLine)) {
          kept[shard] = 0;
          dropped++;
        }
      }
      if (dropped === 0 || count - dropped < 2) break;
      leftOut += dropped;
      count -= dropped;
    }
    const t = qt(0.975, count - 1);
    return {
      phi,
      upper: phi + t * se,
      lower: Math.max(0, phi - t * se),
      windows: this.learned,
      leftOut,
    };
  }

  private ensure(m: number): void {
    if (this.sums.length >= m) return;
    const sums = new Float64Array(m);
    const weights = new Float64Array(m);
    sums.set(this.sums);
    weights.set(this.weights);
    this.sums = sums;
    this.weights = weights;
    this.kept = new Uint8Array(m);
  }
}

/**
 * The dispersion at which divided counts reach the tail of over-dispersed ones: the scaled
 * counts x / phi match a multinomial's mean and variance but not its skew (a clumped count's
 * third cumulant is mu phi (2 phi - 1), the scaled one's mu (2 phi - 1) / phi^2 against
 * Poisson's mu / phi), so their extreme quantiles sit higher than the multinomial ones and
 * the tests would fire more often than alpha. This returns f >= phi such that a Poisson
 * count of mean mu / f exceeds x / f with the probability that a negative binomial count
 * of mean mu and variance phi mu exceeds x, at x its (1 - level) quantile. The negative
 * binomial (gamma-Poisson) is the stated model of clumped counts; Poisson tails at a
 * fractional threshold through the regularized gamma, P(Poisson(l) >= k) = P(Gamma(k) <= l).
 * Tails from lib-r-math.js (R's qnbinom, pnbinom, pgamma). Bisection to a relative 1e-4.
 *
 * @example tailDispersion(100, 1, 1e-5) // 1: no over-dispersion, nothing to match
 */
export function tailDispersion(mean: number, phi: number, level: number): number {
  if (!(phi > 1.000001) || !(mean > 0) || !Number.isFinite(phi)) return phi;
  const size = mean / (phi - 1);
  const threshold = qnbinom(level, size, undefined, mean, false, false);
  if (!(threshold > mean)) return phi;
  const target = pnbinom(threshold - 1, size, undefined, mean, false, true);
  const scaledTail = (f: number) => pgamma(mean / f, threshold / f, 1, undefined, true, true);
  if (scaledTail(phi) >= target) return phi;
  let low = phi;
  let high = 2 * phi;
  while (scaledTail(high) < target && high < 1e6 * phi) high *= 2;
  while (high - low > 1e-4 * low) {
    const mid = (low + high) / 2;
    if (scaledTail(mid) < target) low = mid;
    else high = mid;
  }
  return high;
}
