import { logBinomialDensity, logPoissonDensity } from './discrete-densities.js';
import { log1mExp } from './log-space.js';

/**
 * Tail probabilities of the Poisson and binomial laws, as natural logs.
 *
 * The smaller tail is summed term by term from its first density (Loader 2000,
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
  if (k > mean) return logPoissonRun(k, mean, true);
  return log1mExp(logPoissonRun(k - 1, mean, false));
}

/** log of the sum of binomial densities from k outward (up when `upward`), largest first. */
function logBinomialRun(k: number, trials: number, share: number, upward: boolean): number {
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
 * log P(X >= k), X ~ Binomial(trials, share). Summed when k is above the mean, else the
 * complement of the lower tail. O(terms). Example: logBinomialAtLeast(1, 2, 0.5) = log(0.75).
 */
export function logBinomialAtLeast(k: number, trials: number, share: number): number {
  if (k <= 0) return 0;
  if (k > trials || share === 0) return -Infinity;
  if (share === 1) return 0;
  if (k > trials * share) return logBinomialRun(k, trials, share, true);
  return log1mExp(logBinomialRun(k - 1, trials, share, false));
}

/**
 * log P(X <= k), X ~ Binomial(trials, share). Summed when k is below the mean, else the
 * complement of the upper tail. O(terms). Example: logBinomialAtMost(0, 2, 0.5) = log(0.25).
 */
export function logBinomialAtMost(k: number, trials: number, share: number): number {
  if (k < 0) return -Infinity;
  if (k >= trials || share === 0) return 0;
  if (share === 1) return -Infinity;
  if (k < trials * share) return logBinomialRun(k, trials, share, false);
  return log1mExp(logBinomialRun(k + 1, trials, share, true));
}
