import { logPoissonAtLeast, logPoissonAtMost } from './tails.js';
import { logPoissonDensity } from './discrete-densities.js';

/**
 * A Poisson variable cut to one side: Y ~ Poisson(mean) conditioned on Y <= upper
 * (a ceiling on a shard's load) or on Y >= lower (a floor). These are the independent
 * pieces of Levin's (1981) representation of multinomial box probabilities.
 */
export interface OneSidedCut {
  /** Poisson mean before the cut. */
  readonly mean: number;
  /** Smallest allowed value (0 when there is no floor). */
  readonly lower: number;
  /** Largest allowed value (Infinity when there is no ceiling). */
  readonly upper: number;
}

/**
 * log P(lower <= Y <= upper) for a one-sided cut (or no cut).
 * O(1) calls to the Poisson tails. Example: cutLogMass({mean: 2, lower: 0, upper: 0}) = -2.
 */
export function cutLogMass(cut: OneSidedCut): number {
  if (cut.upper < Infinity) return logPoissonAtMost(cut.upper, cut.mean);
  if (cut.lower > 0) return logPoissonAtLeast(cut.lower, cut.mean);
  return 0;
}

/**
 * The first `order` cumulants of a one-sided truncated Poisson variable.
 *
 * Method: the cumulant generating function is K(t) = mean (e^t - 1) + G(mean e^t) - G(mean)
 * with G(mu) = log P_mu(cut). Writing u(t) = -dG/dt, the derivative rule of the Poisson
 * distribution function (dF_mu(b)/dmu = -P_mu(Y = b)) gives the Riccati equation
 *   du/dt = u (edge + 1 - mean e^t + u),
 * with edge = upper for a ceiling and edge = lower - 1 for a floor, and
 * u(0) = mean P(Y = upper) / P(Y <= upper) (ceiling) or -mean P(Y = lower-1) / P(Y >= lower)
 * (floor). Its Taylor coefficients follow by the usual power-series recursion, and
 * kappa_r = mean - (r - 1)! [t^(r-1)] u(t). This avoids the catastrophic cancellation of
 * turning factorial moments into cumulants when the mean is in the millions.
 * (Derivation ours; the factorial moments quoted in docs/model.md are the check in the tests.)
 * O(order^2) per call plus one density and one tail. Domain: any mean > 0.
 * Example: the cut {mean: 1, lower: 0, upper: 1} is Bernoulli(1/2): cumulants [0.5, 0.25, 0, ...].
 */
export function cutCumulants(cut: OneSidedCut, logMass: number, order = 6): Float64Array {
  const out = new Float64Array(order);
  const mean = cut.mean;
  let u0: number;
  let edge: number;
  if (cut.upper < Infinity) {
    edge = cut.upper;
    u0 = Math.exp(Math.log(mean) + logPoissonDensity(cut.upper, mean) - logMass);
  } else if (cut.lower > 0) {
    edge = cut.lower - 1;
    u0 = -Math.exp(Math.log(mean) + logPoissonDensity(cut.lower - 1, mean) - logMass);
  } else {
    out.fill(mean);
    return out;
  }
  // Taylor coefficients of u(t) and of mean * e^t.
  const u = new Float64Array(order);
  const mu = new Float64Array(order);
  u[0] = u0;
  let factorial = 1;
  for (let k = 0; k < order; k++) {
    if (k > 0) factorial *= k;
    mu[k] = mean / factorial;
  }
  for (let k = 0; k + 1 < order; k++) {
    let convMu = 0;
    let convU = 0;
    for (let j = 0; j <= k; j++) {
      convMu += mu[j] * u[k - j];
      convU += u[j] * u[k - j];
    }
    u[k + 1] = ((edge + 1) * u[k] - convMu + convU) / (k + 1);
  }
  factorial = 1;
  for (let r = 1; r <= order; r++) {
    if (r > 1) factorial *= r - 1;
    out[r - 1] = mean - factorial * u[r - 1];
  }
  return out;
}

/**
 * The conditional probability mass function of a one-sided cut over its effective support
 * (given the cut's log mass), with terms below `relativeFloor` times the peak dropped. Returned as the
 * first value's position and the values; at most `maxValue` is kept.
 * Built from the mode outwards with the ratio P(j+1)/P(j) = mean/(j+1), one log density
 * (Loader 2000) for the peak. O(width).
 * Example: {mean: 1, lower: 0, upper: 1} gives offset 0 and [0.5, 0.5].
 */
export function cutMassFunction(
  cut: OneSidedCut,
  logMass: number,
  maxValue: number,
  relativeFloor = 1e-40,
): { offset: number; values: Float64Array } {
  const low = cut.lower;
  const high = Math.min(cut.upper, maxValue);
  if (high < low) return { offset: low, values: new Float64Array(0) };
  const mode = Math.min(high, Math.max(low, Math.floor(cut.mean)));
  const logPeak = logPoissonDensity(mode, cut.mean);
  // Walk up and down from the mode until the terms fall below the floor.
  const up: number[] = [];
  let term = 1;
  for (let j = mode + 1; j <= high; j++) {
    term *= cut.mean / j;
    if (term < relativeFloor) break;
    up.push(term);
  }
  const down: number[] = [];
  term = 1;
  for (let j = mode; j > low; j--) {
    term *= j / cut.mean;
    if (term < relativeFloor) break;
    down.push(term);
  }
  const values = new Float64Array(down.length + 1 + up.length);
  // Scale by the peak's conditional probability, not by the kept sum: values above
  // maxValue are cut off here but still belong to the conditional law.
  const peak = Math.exp(logPeak - logMass);
  for (let i = 0; i < down.length; i++) values[down.length - 1 - i] = down[i] * peak;
  values[down.length] = peak;
  for (let i = 0; i < up.length; i++) values[down.length + 1 + i] = up[i] * peak;
  return { offset: mode - down.length, values };
}
