import { pchisq } from 'lib-r-math.js';
import type { Placement } from './placement.js';
import { shareOf } from './placement.js';

/**
 * How broadly uneven the load is: Pearson's chi-square statistic, the dispersion index
 * phi = X^2 / (m - 1) (1 under random placement) and its p-value.
 */
export interface Spread {
  /** Pearson X^2 = sum (x_i - N p_i)^2 / (N p_i). */
  readonly chiSquare: number;
  /** Degrees of freedom, m - 1. */
  readonly degreesOfFreedom: number;
  /** phi = X^2 / (m - 1). */
  readonly dispersion: number;
  /** Natural log of P(X^2 >= observed) under H0. */
  readonly logProbability: number;
  /** Variance of X^2 under H0 (Haldane 1937). */
  readonly nullVariance: number;
  /** N_eff = N / phi, the number of independent placements the spread is worth. */
  readonly effectiveTotal: number;
}

/**
 * Pearson chi-square test of the counts against the expected shares.
 * The null distribution is matched on its first two exact moments: mean m - 1 and
 * Haldane's (1937) variance 2(m - 1) + (sum 1/p_i - m^2 - 2m + 2) / N, "The exact value of
 * the moments of the distribution of chi-square", Biometrika 29. A scaled chi-square
 * c chi^2_nu with c nu = m - 1 and 2 c^2 nu = that variance (Satterthwaite 1946) is used
 * for the p-value; for equal shares with many requests per shard it is the classical
 * chi^2_{m-1}. Upper tail by lib-r-math.js pchisq(x, nu, undefined, false, true) (R's pchisq, in log space).
 * O(m). Example: counts [5, 5] under equal shares give X^2 = 0 and p-value 1.
 */
export function spreadTest(placement: Placement, counts: ArrayLike<number>): Spread {
  const m = placement.shardCount;
  const n = placement.total;
  let chiSquare = 0;
  let inverseShares = 0;
  for (let i = 0; i < m; i++) {
    const p = shareOf(placement, i);
    if (p === 0) continue;
    const expected = n * p;
    const d = counts[i] - expected;
    chiSquare += (d * d) / expected;
    inverseShares += 1 / p;
  }
  const df = m - 1;
  if (df === 0 || n === 0) {
    return {
      chiSquare: 0,
      degreesOfFreedom: df,
      dispersion: 1,
      logProbability: 0,
      nullVariance: 0,
      effectiveTotal: n,
    };
  }
  const nullVariance = Math.max(1e-12, 2 * df + (inverseShares - m * m - 2 * m + 2) / n);
  const scale = nullVariance / (2 * df);
  const nu = (2 * df * df) / nullVariance;
  const logProbability = pchisq(chiSquare / scale, nu, undefined, false, true);
  const dispersion = chiSquare / df;
  return {
    chiSquare,
    degreesOfFreedom: df,
    dispersion,
    logProbability,
    nullVariance,
    effectiveTotal: dispersion > 0 ? n / Math.max(dispersion, 1) : n,
  };
}

/**
 * Robust dispersion: the median squared Pearson residual divided by 0.4549364, the median of
 * a chi-square with one degree of freedom (so it is 1 under H0), which a few hot shards
 * cannot move. Residuals of shards with zero expected load are skipped.
 * O(m log m). Example: counts [10, 10, 10, 40] under equal shares: median of [1.6..] etc.
 */
export function robustDispersion(placement: Placement, counts: ArrayLike<number>): number {
  const m = placement.shardCount;
  const squares: number[] = [];
  for (let i = 0; i < m; i++) {
    const expected = placement.total * shareOf(placement, i);
    if (expected <= 0) continue;
    const d = counts[i] - expected;
    squares.push((d * d) / expected);
  }
  if (squares.length === 0) return 1;
  squares.sort((a, b) => a - b);
  const mid = squares.length >> 1;
  const median = squares.length % 2 === 1 ? squares[mid] : (squares[mid - 1] + squares[mid]) / 2;
  return median / CHI_SQUARE_ONE_MEDIAN;
}

/** Median of the chi-square distribution with one degree of freedom (common practice; 0.454936...). */
export const CHI_SQUARE_ONE_MEDIAN = 0.45493642311957;
