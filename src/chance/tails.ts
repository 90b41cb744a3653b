import { pnorm } from 'lib-r-math.js';
import { logBinomialDensity, logPoissonDensity } from './discrete-densities.js';
import { logGammaRatio } from './gamma-ratio-expansion.js';
import { log1mExp } from './log-space.js';

/**
 * Tail probabilities of the Poisson and binomial laws, as natural logs.
 *
 * Poisson tails with a large count near the mean (where a sum would need thousands of
 * terms) come in O(1) from Temme's uniform expansion of the incomplete gamma ratio
 * (gamma-ratio-expansion.ts): P(Y >= k) = P(k, mean), P(Y <= k) = Q(k + 1, mean).
 * Otherwise the smaller tail is summed term by term from its first density (Loader 2000,
 * discrete-densities.ts) with the ratio P(j+1)/P(j) = mean / (j + 1) (Poisson) or
 * (n - j) p / ((j + 1) q) (binomial), until the
 * terms fall below 1e-17 of the sum; the larger tail is its complement in log space. All
 * terms are positive, so the sum keeps about 12 digits; the cost is the number of terms,
 * about 9 standard deviations at the centre and fewer further out.
 *
 * Libraries tried first and rejected against scipy.stats and mpmath (test/chance/tails.test.ts):
 * @stdlib/math-base-special-gammainc 0.3.1 and betainc 0.2.3 are off by about 1% near the
 * centre of Poisson(1e4) and Binomial(1e9, 1/2); lib-r-math.js 2.0.3 pbinom is off by 4e-5
 * at Binomial(1e9, 1e-5) and by 2e-3 in the far tail of Binomial(1e6, 1/2), and its ppois
 * by 24% at P(Poisson(1e8) >= 1e8 + 8 sd).
 */

/** log of the sum of Poisson densities from k outward (up when `upward`), largest first. */
function logPoissonRun(k: number, mean: number, upward: boolean): number {
  const first = logPoissonDensity(k, mean);
  if (first === -Infinity) return -Infinity;
  let sum = 1;
  let term = 1;
  if (upward) {
    for (let j = k + 1; ; j++) {
      term *= mean / j;
      sum += term;
      if (term < sum * 1e-17) break;
    }
  } else {
    for (let j = k; j > 0; j--) {
      term *= j / mean;
      sum += term;
      if (term < sum * 1e-17) break;
    }
  }
  return first + Math.log(sum);
}

/**
 * log P(Y <= k), Y ~ Poisson(mean). Summed when k is below the mean, else the complement
 * of the upper tail. O(terms). Example: logPoissonAtMost(0, 2) = -2.
 */
export function logPoissonAtMost(k: number, mean: number): number {
  if (k < 0) return -Infinity;
  if (mean === 0) return 0;
  const expanded = logGammaRatio(k + 1, mean, 'upper');
  if (expanded !== null) return expanded;
  if (k < mean) return logPoissonRun(k, mean, false);
  return log1mExp(logPoissonRun(k + 1, mean, true));
}

/**
 * log P(Y >= k), Y ~ Poisson(mean). Summed when k is above the mean, else the complement.
 * O(terms). Example: logPoissonAtLeast(1, 2) = log(1 - e^-2).
 */
export function logPoissonAtLeast(k: number, mean: number): number {
  if (k <= 0) return 0;
  if (mean === 0) return -Infinity;
  const expanded = logGammaRatio(k, mean, 'lower');
  if (expanded !== null) return expanded;
  if (k > mean) return logPoissonRun(k, mean, true);
  return log1mExp(logPoissonRun(k - 1, mean, false));
}

/**
 * The same run in O(1) when the share is small, from a Poisson run and a correction.
 * Upward from k, the binomial ratios are P(j+1)/P(j) = mean_j / (j + 1) with
 * mean_j = (trials - j) share / (1 - share), i.e. the Poisson ratios at mean_k times
 * (1 - i / (trials - k)) after i steps; downward the means grow as 1 + i / (trials - k + 1).
 * So run/P(k) is the Poisson run/density at mean_k averaged against
 * prod_i (1 -+ i eps) = exp(-eps J (J - 1) / 2 + O(eps^2 J^3)), J the distance travelled,
 * and E[J (J - 1)] under the Poisson run follows in closed form from its run/density ratio
 * (Poisson factorial moments: E[Y (Y-1) 1{Y >= k-2}] = mean^2 P(Y >= k - 2), and the like).
 * Used only for k >= 25 and shares up to 1e-3, when that correction is below 2e-5, where the
 * neglected terms are below 1e-9 relative (tested against the term-by-term sum); null
 * otherwise.
 * (Derivation ours; checked against scipy.stats.binom and the exact sum in the tests.)
 */
function logBinomialRunFromPoisson(
  k: number,
  trials: number,
  share: number,
  upward: boolean,
): number | null {
  // Short runs are summed: the saving is nil and the correction's algebra cancels there.
  if (share > MAX_POISSONIZED_SHARE || k < 25) return null;
  const odds = share / (1 - share);
  const mean = upward ? (trials - k) * odds : (trials - k + 1) * odds;
  if (!(mean > 0)) return null;
  const logRun = upward ? logPoissonAtLeast(k, mean) : logPoissonAtMost(k, mean);
  const logRatio = logRun - logPoissonDensity(k, mean);
  const ratio = Math.exp(logRatio);
  const gap = k - mean;
  const factorialMoment = upward
    ? gap * gap + k - (k * (gap + 1)) / ratio
    : gap * gap + 2 * mean - k - (mean * (mean - k + 2)) / ratio;
  const correction = Math.max(0, factorialMoment) / (2 * (upward ? trials - k : trials - k + 1));
  if (!(correction <= MAX_POISSON_CORRECTION)) return null;
  return logBinomialDensity(k, trials, share) + logRatio - correction;
}

/** Shares above this are summed term by term (the correction would not be small). */
const MAX_POISSONIZED_SHARE = 1e-3;
/** Largest first-order correction accepted from the Poisson run. */
const MAX_POISSON_CORRECTION = 2e-5;

/** log of the sum of binomial densities from k outward (up when `upward`), largest first. */
function logBinomialRun(k: number, trials: number, share: number, upward: boolean): number {
  const fast = logBinomialRunFromPoisson(k, trials, share, upward);
  if (fast !== null) return fast;
  return logBinomialRunSummed(k, trials, share, upward);
}

/** The binomial run summed term by term. */
function logBinomialRunSummed(k: number, trials: number, share: number, upward: boolean): number {
  const first = logBinomialDensity(k, trials, share);
  if (first === -Infinity) return -Infinity;
  const odds = share / (1 - share);
  let sum = 1;
  let term = 1;
  if (upward) {
    for (let j = k; j < trials; j++) {
      term *= ((trials - j) / (j + 1)) * odds;
      sum += term;
      if (term < sum * 1e-17) break;
    }
  } else {
    for (let j = k; j > 0; j--) {
      term *= j / (trials - j + 1) / odds;
      sum += term;
      if (term < sum * 1e-17) break;
    }
  }
  return first + Math.log(sum);
}

/**
 * Binomial variance N p (1 - p) from which both binomial tails come from the saddle point
 * (binomialSaddleTail) instead of a sum: the sum then needs over 1e4 terms (about nine
 * standard deviations), and the saddle point's relative error is below 1e-9.
 */
export const SADDLE_VARIANCE = 1e6;

/**
 * Long name: binomial tail by the continuity-corrected saddle-point approximation.
 * log P(X >= k) (upward) or log P(X <= k), X ~ Binomial(trials, share), in O(1); the lower
 * tail as the upper tail of N - X. Method: the Lugannani-Rice formula
 * with Daniels' second continuity correction for lattice laws (Daniels 1987, "Tail
 * probability approximations", International Statistical Review 55, 37-48, eq. 2.9; Butler
 * 2007, "Saddlepoint Approximations with Applications", section 1.2.5):
 *   P(X >= k) ~ Q(w) + phi(w) (1/u - 1/w),  at x = k - 1/2,
 *   w = sign(s) sqrt(2 (bd0(x, N p) + bd0(N - x, N q))),  u = 2 sinh(s/2) sqrt(x (N - x) / N),
 *   s = log(x q / ((N - x) p)) the saddle point,
 * with Loader's deviance bd0 (no cancellation at N = 2^53) and Q in log space (R's pnorm),
 * so tails far below 1e-300 keep their log. At the centre (|w| < 1e-7) the formula's
 * limit 1/2 - (x - N p + (q - p) / 6) / sqrt(2 pi N p q) is used. Domain: 0 < k <= N, 0 < p < 1.
 * Error: relative O(1 / (N p q)); below 1e-8 (2e-9 seen at 30 sd) against mpmath's incomplete
 * beta integral up to N = 2^53 - 1 (test/chance/tails.test.ts, reference/huge.json). Null where the formula is not
 * positive (never seen on that domain), and the caller sums.
 * Example: binomialSaddleTail(5e8 + 1e5, 1e9, 0.5) is log(P(X >= 5e8 + 1e5)) = log(1.2e-10)...
 */
export function binomialSaddleTail(
  k: number,
  trials: number,
  share: number,
  upward = true,
): number | null {
  // The lower tail is the upper tail of N - X ~ Binomial(N, 1 - p) at N - k, but with its
  // distance from the mean taken from N p directly: N (1 - p) in doubles is off by up to
  // N 2^-53 (one count at N = 2^53), which moved lower tails by 1e-5 relative at N = 9e15.
  const rest = 1 - share;
  // The distance of x = k -+ 1/2 from N p, with N p taken exactly as a sum of two doubles
  // (Dekker's product), so that near the centre w and u keep their digits and their
  // difference (the correction, of order 1 / sqrt(N p q)) is not rounding noise.
  const [high, low] = exactProduct(trials, share);
  const gap = upward ? k - high - low - 0.5 : high - k + low - 0.5;
  // From here on, the law's own share and mean (p for X, 1 - p for N - X).
  const [lawShare, lawRest] = upward ? [share, rest] : [rest, share];
  const mean = upward ? high : trials - high;
  const meanRest = trials - mean;
  const x = mean + gap;
  const w2 =
    2 * (mean * relativeEntropyTerm(gap / mean) + meanRest * relativeEntropyTerm(-gap / meanRest));
  const w = Math.sign(gap) * Math.sqrt(w2);
  if (Math.abs(w) < 1e-7) {
    // The limit at w = 0 with its slope in the gap (at |w| < 1e-7 the gap is up to 1e-7
    // standard deviations, which moved the tail by 4e-8 when left out).
    const sd = Math.sqrt(mean * lawRest);
    const centre = 0.5 - (gap + (lawRest - lawShare) / 6) / (Math.sqrt(2 * Math.PI) * sd);
    return Math.log(centre);
  }
  // The saddle point s = log(x q / ((N - x) p)) = log(1 + gap / Np) - log(1 - gap / Nq).
  const s = Math.log1p(gap / mean) - Math.log1p(-gap / meanRest);
  const u = 2 * Math.sinh(s / 2) * Math.sqrt((x * (meanRest - gap)) / trials);
  const correction = 1 / u - 1 / w;
  const logPhi = -w2 / 2 - 0.5 * Math.log(2 * Math.PI);
  if (w > 0) {
    const logQ = pnorm(w, 0, 1, false, true);
    const ratio = correction * Math.exp(logPhi - logQ);
    return ratio > -1 ? logQ + Math.log1p(ratio) : null;
  }
  const value = pnorm(w, 0, 1, false, false) + Math.exp(logPhi) * correction;
  return value > 0 ? Math.log(value) : null;
}

/** (1 + t) log(1 + t) - t, by its series sum_(j>=2) (-t)^j / (j (j - 1)) for small t. */
function relativeEntropyTerm(t: number): number {
  if (Math.abs(t) > 0.01) return (1 + t) * Math.log1p(t) - t;
  let sum = 0;
  let power = -t;
  for (let j = 2; j <= 12; j++) {
    power *= -t;
    sum += power / (j * (j - 1));
  }
  return sum;
}

/** a b as high + low, exactly (Dekker 1971, "A floating-point technique for extending the available precision"). */
function exactProduct(a: number, b: number): [number, number] {
  const product = a * b;
  const [aHigh, aLow] = split(a);
  const [bHigh, bLow] = split(b);
  const low = aHigh * bHigh - product + aHigh * bLow + aLow * bHigh + aLow * bLow;
  return [product, low];
}

/** Veltkamp's split of a double into two halves of 26 bits. */
function split(a: number): [number, number] {
  const c = 134217729 * a;
  const high = c - (c - a);
  return [high, a - high];
}

/**
 * log P(X >= k), X ~ Binomial(trials, share). Summed when k is above the mean, else the
 * complement of the lower tail. O(terms). Example: logBinomialAtLeast(1, 2, 0.5) = log(0.75).
 */
export function logBinomialAtLeast(k: number, trials: number, share: number): number {
  if (k <= 0) return 0;
  if (k > trials || share === 0) return -Infinity;
  if (share === 1) return 0;
  if (trials * share * (1 - share) >= SADDLE_VARIANCE) {
    const saddle = binomialSaddleTail(k, trials, share);
    if (saddle !== null) return saddle;
  }
  if (k > trials * share) return logBinomialRun(k, trials, share, true);
  return log1mExp(logBinomialRun(k - 1, trials, share, false));
}

/**
 * log P(X <= k), X ~ Binomial(trials, share). Summed when k is below the mean, else the
 * complement of the upper tail. O(terms). Example: logBinomialAtMost(0, 2, 0.5) = log(0.25).
 */
/** For tests: the run summed term by term and from the Poisson run (null where not used). */
export function binomialRunMethods(
  k: number,
  trials: number,
  share: number,
  upward: boolean,
): { summed: number; fromPoisson: number | null } {
  return {
    summed: logBinomialRunSummed(k, trials, share, upward),
    fromPoisson: logBinomialRunFromPoisson(k, trials, share, upward),
  };
}

export function logBinomialAtMost(k: number, trials: number, share: number): number {
  if (k < 0) return -Infinity;
  if (k >= trials || share === 0) return 0;
  if (share === 1) return -Infinity;
  if (trials * share * (1 - share) >= SADDLE_VARIANCE) {
    // P(X <= k) = P(N - X >= N - k), N - X ~ Binomial(N, 1 - p).
    const saddle = binomialSaddleTail(k, trials, share, false);
    if (saddle !== null) return saddle;
  }
  if (k < trials * share) return logBinomialRun(k, trials, share, false);
  return log1mExp(logBinomialRun(k + 1, trials, share, true));
}
