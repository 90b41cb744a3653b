import gammainc from '@stdlib/math-base-special-gammainc';
import betainc from '@stdlib/math-base-special-betainc';
import { log1mExp } from './log-space.js';
import { logBinomialDensity, logPoissonDensity } from './discrete-densities.js';

/**
 * Tail probabilities of the Poisson and binomial laws, as natural logs.
 *
 * The regularized incomplete gamma and beta functions come from
 * @stdlib/math-base-special-gammainc (gammainc(x, a, true, upper)) and
 * @stdlib/math-base-special-betainc (betainc(x, a, b, true, upper)). The smaller tail is
 * always computed directly and the larger one as its complement in log space, so both
 * ends keep relative precision. Where the library result underflows double precision
 * (tails below about 1e-300), the tail is summed from its largest term in log space, so a
 * possible event never gets log probability -Infinity.
 */

const UNDERFLOW = 1e-280;

/** log sum_{j>=0} prod_{i<j} ratio(i): the tail series from its first term, ratios < 1. */
function logRatioSeries(ratio: (i: number) => number): number {
  let sum = 1;
  let term = 1;
  for (let i = 0; i < 100000; i++) {
    term *= ratio(i);
    if (!(term > 0)) break;
    sum += term;
    if (term < sum * 1e-17) break;
  }
  return Math.log(sum);
}

/**
 * log P(Y <= k), Y ~ Poisson(mean). Regularized upper incomplete gamma Q(k + 1, mean)
 * (stdlib gammainc(mean, k + 1, true, true)); the complement of the upper tail when that is
 * smaller. O(1) for most arguments (series of at most a few hundred terms when the
 * library underflows). Example: logPoissonAtMost(0, 2) = -2.
 */
export function logPoissonAtMost(k: number, mean: number): number {
  if (k < 0) return -Infinity;
  if (mean === 0) return 0;
  if (k + 1 > mean) {
    return log1mExp(logPoissonAtLeast(k + 1, mean));
  }
  const value = gammainc(mean, k + 1, true, true);
  if (value > UNDERFLOW) return Math.log(value);
  // Far lower tail: sum downwards from the term at k, ratios k/mean, (k-1)/mean, ...
  return logPoissonDensity(k, mean) + logRatioSeries((i) => (k - i) / mean);
}

/**
 * log P(Y >= k), Y ~ Poisson(mean). Regularized lower incomplete gamma P(k, mean)
 * (stdlib gammainc(mean, k, true, false)); the complement of the lower tail when smaller.
 * O(1) mostly. Example: logPoissonAtLeast(1, 2) = log(1 - e^-2).
 */
export function logPoissonAtLeast(k: number, mean: number): number {
  if (k <= 0) return 0;
  if (mean === 0) return -Infinity;
  if (k <= mean) {
    return log1mExp(logPoissonAtMost(k - 1, mean));
  }
  const value = gammainc(mean, k, true, false);
  if (value > UNDERFLOW) return Math.log(value);
  return logPoissonDensity(k, mean) + logRatioSeries((i) => mean / (k + 1 + i));
}

/**
 * log P(X >= k), X ~ Binomial(trials, share): the regularized incomplete beta
 * I_share(k, trials - k + 1) (stdlib betainc(share, k, trials - k + 1, true, false)).
 * O(1) mostly. Example: logBinomialAtLeast(1, 2, 0.5) = log(0.75).
 */
export function logBinomialAtLeast(k: number, trials: number, share: number): number {
  if (k <= 0) return 0;
  if (k > trials || share === 0) return -Infinity;
  if (share === 1) return 0;
  if (k <= trials * share) {
    return log1mExp(logBinomialAtMost(k - 1, trials, share));
  }
  const value = betainc(share, k, trials - k + 1, true, false);
  if (value > UNDERFLOW) return Math.log(value);
  const odds = share / (1 - share);
  return (
    logBinomialDensity(k, trials, share) +
    logRatioSeries((i) => ((trials - k - i) / (k + 1 + i)) * odds)
  );
}

/**
 * log P(X <= k), X ~ Binomial(trials, share): the upper regularized incomplete beta
 * 1 - I_share(k + 1, trials - k) (stdlib betainc(share, k + 1, trials - k, true, true)).
 * O(1) mostly. Example: logBinomialAtMost(0, 2, 0.5) = log(0.25).
 */
export function logBinomialAtMost(k: number, trials: number, share: number): number {
  if (k < 0) return -Infinity;
  if (k >= trials || share === 0) return 0;
  if (share === 1) return -Infinity;
  if (k + 1 > trials * share) {
    return log1mExp(logBinomialAtLeast(k + 1, trials, share));
  }
  const value = betainc(share, k + 1, trials - k, true, true);
  if (value > UNDERFLOW) return Math.log(value);
  const inverseOdds = (1 - share) / share;
  return (
    logBinomialDensity(k, trials, share) +
    logRatioSeries((i) => ((k - i) / (trials - k + 1 + i)) * inverseOdds)
  );
}
