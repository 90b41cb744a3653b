import { lgamma as gammaln } from 'lib-r-math.js';

/**
 * Log densities of the Poisson and binomial laws with full relative precision even when
 * the counts are in the billions.
 *
 * The naive form k log(lambda) - lambda - lgamma(k + 1) subtracts numbers near 2e10 to get
 * an answer near 10, losing six digits at N = 1e9. Loader (2000), "Fast and Accurate
 * Computation of Binomial Probabilities", writes the density as a saddle-point term
 * (the deviance bd0) plus Stirling's error term, both computed without cancellation.
 * This is also the method of R's dpois and dbinom.
 */

const LOG_TWO_PI = Math.log(2 * Math.PI);
const HALF_LOG_TWO_PI = 0.5 * LOG_TWO_PI;

/**
 * Stirling's error term: log(n!) - log(sqrt(2 pi n) (n/e)^n).
 * Loader (2000), section 3: series in 1/n for n > 15, the log-gamma function of
 * lib-r-math.js's lgamma (R's lgammafn) below that (where nothing cancels badly).
 * O(1). Domain n >= 0. Example: stirlingError(1) = log(1) - log(sqrt(2 pi) / e) = 0.0810614667953273.
 */
export function stirlingError(n: number): number {
  if (n <= 15) {
    if (n === 0) return 0; // by continuity of the definition; log(0!) = 0 and the bracket tends to 0
    return gammaln(n + 1) - (n + 0.5) * Math.log(n) + n - HALF_LOG_TWO_PI;
  }
  const nn = n * n;
  const S0 = 1 / 12;
  const S1 = 1 / 360;
  const S2 = 1 / 1260;
  const S3 = 1 / 1680;
  const S4 = 1 / 1188;
  if (n > 500) return (S0 - S1 / nn) / n;
  if (n > 80) return (S0 - (S1 - S2 / nn) / nn) / n;
  if (n > 35) return (S0 - (S1 - (S2 - S3 / nn) / nn) / nn) / n;
  return (S0 - (S1 - (S2 - (S3 - S4 / nn) / nn) / nn) / nn) / n;
}

/**
 * The deviance term bd0(x, mean) = x log(x / mean) + mean - x, computed by a series in
 * v = (x - mean) / (x + mean) when x and mean are close (Loader 2000, section 2).
 * O(1) (a short series). Domain x >= 0, mean > 0. Example: deviance(10, 10) = 0.
 */
export function deviance(x: number, mean: number): number {
  if (x === 0) return mean;
  if (Math.abs(x - mean) < 0.1 * (x + mean)) {
    let v = (x - mean) / (x + mean);
    let sum = (x - mean) * v;
    let term = 2 * x * v;
    v = v * v;
    for (let j = 1; j < 1000; j++) {
      term *= v;
      const next = sum + term / (2 * j + 1);
      if (next === sum) return next;
      sum = next;
    }
    return sum;
  }
  return x * Math.log(x / mean) + mean - x;
}

/**
 * Natural log of the Poisson probability P(Y = k), Y ~ Poisson(mean).
 * Loader (2000). O(1). Relative error of the density about 1e-15 for any k and mean.
 * Example: logPoissonDensity(23, 23) = log(0.08297...) (Poisson(23) at its mode).
 */
export function logPoissonDensity(k: number, mean: number): number {
  if (k < 0 || !Number.isInteger(k)) return -Infinity;
  if (mean === 0) return k === 0 ? 0 : -Infinity;
  if (k === 0) return -mean;
  return -stirlingError(k) - deviance(k, mean) - 0.5 * (LOG_TWO_PI + Math.log(k));
}

/**
 * Natural log of the binomial probability P(X = k), X ~ Binomial(trials, share).
 * Loader (2000). O(1). Relative error about 1e-15 for trials up to 2^53.
 * Example: logBinomialDensity(1, 2, 0.5) = log(0.5).
 */
export function logBinomialDensity(k: number, trials: number, share: number): number {
  if (k < 0 || k > trials || !Number.isInteger(k)) return -Infinity;
  const rest = 1 - share;
  if (share === 0) return k === 0 ? 0 : -Infinity;
  if (rest === 0) return k === trials ? 0 : -Infinity;
  if (k === 0) return trials * Math.log1p(-share);
  if (k === trials) return trials * Math.log(share);
  const lc =
    stirlingError(trials) -
    stirlingError(k) -
    stirlingError(trials - k) -
    deviance(k, trials * share) -
    deviance(trials - k, trials * rest);
  const lf = LOG_TWO_PI + Math.log(k) + Math.log1p(-k / trials);
  return lc - 0.5 * lf;
}

/**
 * Natural log of n! by the log-gamma function of lib-r-math.js (lgamma, R's lgammafn).
 * O(1). Example: logFactorial(5) = log(120).
 */
export function logFactorial(n: number): number {
  return gammaln(n + 1);
}

/**
 * Natural log of the binomial coefficient C(n, k), exact to rounding for n up to 2^53.
 * Uses Stirling's error terms (Loader 2000) so that large n does not cancel.
 * O(1). Example: logChoose(5, 2) = log(10).
 */
export function logChoose(n: number, k: number): number {
  if (k < 0 || k > n) return -Infinity;
  if (k === 0 || k === n) return 0;
  if (n < 1e6) return gammaln(n + 1) - gammaln(k + 1) - gammaln(n - k + 1);
  // C(n,k) = 1 / ((n+1) * binomialDensity(k; n, 1/2) ... ) is awkward; use the density at
  // share k/n: C(n,k) (k/n)^k ((n-k)/n)^(n-k) = exp(logBinomialDensity(k, n, k/n)).
  const share = k / n;
  return logBinomialDensity(k, n, share) - k * Math.log(share) - (n - k) * Math.log1p(-share);
}
