import { chanceCacheOr, type ChanceCache } from './chance-cache.js';
import { fftConvolve, type Twiddles } from './fft-convolution.js';

/**
 * The box "no shard reaches its threshold" in the normal limit of the multinomial, for few
 * shards and huge totals, where Levin's box is out of reach (its cut laws stay skewed and
 * the exact convolution is too long).
 *
 * After centring at N p_i and scaling by sqrt(N), the counts tend to a normal vector with
 * the multinomial covariance diag(p) - p p^T (central limit theorem for sums of independent
 * one-hot vectors). That vector is the law of independent U_i ~ N(0, p_i) given sum U_i = 0
 * (conditioning independent normals on their sum leaves covariance diag(p) - p p^T / sum p),
 * so
 *   P(all U_i < c_i | sum U = 0) = h(0) / phi_V(0),   V = sum p_i,
 * where h is the convolution of the cut densities phi_{p_i}(u) 1{u < c_i} and phi_V the
 * normal density of the sum.
 *
 * Numerics: each cut density is sampled on a lattice of step d aligned with its cut (the
 * cut point with weight 1/2), the samples are convolved (FFT), and h(0) is read at a lattice
 * point (d divides the sum of the cuts, so no interpolation). Sampling a normal density on a
 * lattice loses only
 * exp(-2 pi^2 sd^2 / d^2) (Poisson summation), so the error is the trapezoid's end term at
 * each cut, an even power series in d (Euler-Maclaurin); three steps sd/8, sd/16, sd/32 and
 * Richardson extrapolation remove the d^2 and d^4 terms, and the last correction is the
 * estimate of what remains.
 *
 * Continuity: "X_i <= k - 1" is taken as U_i < (k - 1/2 - N p_i) / sqrt(N). What the normal
 * limit leaves out is the multinomial's lattice Edgeworth expansion beyond its leading term
 * (Bhattacharya and Rao 1976, "Normal Approximation and Asymptotic Expansions", ch. 5): a
 * skewness term of order (1 + z^3) / sqrt(N p (1 - p)) relative for a cut z standard
 * deviations out, and a lattice term of order 1 / (N p). The caller adds that estimate
 * (extreme-load.ts); at N p = 3e11 and z = 1.5 it is about 3e-5.
 */

/** A shard: its share p (of a total of 1) and its cut c (in units of sqrt(N)). */
export interface NormalCut {
  readonly share: number;
  readonly cut: number;
}

/** P(all U_i < c_i | sum U_i = 0), with its estimated absolute numeric error. */
export interface NormalBox {
  readonly probability: number;
  readonly numericError: number;
}

/** Standard deviations kept on each side: the normal density is below 1e-36 beyond. */
const REACH = 13;

/**
 * The box at lattice step sum(tops) / steps: the sampled convolution read at sum 0, which
 * is the lattice point `steps` (every cut and the reading on the lattice, no interpolation).
 */
function boxAtStep(
  cuts: readonly NormalCut[],
  tops: readonly number[],
  steps: number,
  twiddles: (n: number) => Twiddles,
): number {
  const top = tops.reduce((s, t) => s + t, 0);
  const step = top / steps;
  let product: Float64Array | null = null;
  // product[i] holds the partial sum (sum of the tops so far) - (i + dropped) * step.
  let dropped = 0;
  for (let k = 0; k < cuts.length; k++) {
    const sd = Math.sqrt(cuts[k].share);
    const length = Math.floor((tops[k] + REACH * sd) / step) + 1;
    const samples = new Float64Array(length);
    const scale = step / (sd * Math.sqrt(2 * Math.PI));
    for (let j = 0; j < length; j++) {
      const z = (tops[k] - j * step) / sd;
      samples[j] = scale * Math.exp(-0.5 * z * z);
    }
    samples[0] /= 2;
    product = product === null ? samples : fftConvolve(product, samples, twiddles);
    // Ends below 1e-40 of the peak are dropped (the sum's law is near normal: they are its
    // far tails, and FFT noise there anyway).
    let peak = 0;
    for (const v of product) peak = Math.max(peak, v);
    let first = 0;
    let last = product.length;
    while (first < last && product[first] < 1e-40 * peak) first++;
    while (last > first && product[last - 1] < 1e-40 * peak) last--;
    dropped += first;
    product = product.subarray(first, last);
  }
  const at = steps - dropped;
  if (product === null || at < 0 || at >= product.length) return 0;
  const variance = cuts.reduce((s, c) => s + c.share, 0);
  const densityAtZero = 1 / Math.sqrt(2 * Math.PI * variance);
  return Math.min(1, Math.max(0, product[at] / step / densityAtZero));
}

/** Steps per smallest standard deviation at the finest of the three lattices. */
const FINEST = 32;

/**
 * Length of the finest lattice's full convolution (sum over shards of 2 REACH sd_i / step),
 * which the cost follows (m FFT convolutions up to that length, three times).
 */
export function normalBoxPoints(cuts: readonly NormalCut[]): number {
  const smallest = Math.sqrt(Math.min(...cuts.map((c) => c.share)));
  return cuts.reduce((n, c) => n + (2 * REACH * FINEST * Math.sqrt(c.share)) / smallest, 0);
}

/**
 * P(all U_i < c_i | sum U_i = 0) for independent U_i ~ N(0, p_i), two cuts or more.
 * Cost: three chains of m FFT convolutions, the longest about 26 * 32 * sqrt(sum p / p_min)
 * points (a few milliseconds for 3 shards). The FFT twiddle tables come from `cache`
 * (without one, the default: chance-cache.ts).
 * Example: two shards of share 1/2 with cuts 0.1 and 0.1: U_1 = -U_2 ~ N(0, 1/4), so the
 * box is P(|U_1| < 0.1) = 2 Phi(0.2) - 1 = 0.15851.
 */
export function normalBox(cuts: readonly NormalCut[], cache?: ChanceCache): NormalBox {
  const smallest = Math.sqrt(Math.min(...cuts.map((c) => c.share)));
  // A cut beyond the reach changes nothing: the lattice starts at the reach instead (its
  // half weight there is below the density's 1e-36).
  const tops = cuts.map((c) => Math.min(c.cut, REACH * Math.sqrt(c.share)));
  const top = tops.reduce((s, t) => s + t, 0);
  // The sum of the U_i is 0 while each stays below its cut: impossible unless the cuts sum above 0.
  if (!(top > 0)) return { probability: 0, numericError: 0 };
  // The lattice step divides the cuts' sum: a sum far below the smallest standard deviation
  // would ask for a lattice too fine to afford. Not computed (the box is then below about
  // (8 sum / sd)^(m-1), its complement near 1).
  if (top < smallest / 8) return { probability: NaN, numericError: Infinity };
  const steps = Math.ceil((8 * top) / smallest);
  const twiddles = chanceCacheOr(cache).twiddles;
  const q = [1, 2, 4].map((n) => boxAtStep(cuts, tops, n * steps, twiddles));
  // Errors a d^2 + b d^4 + ...: two Richardson steps.
  const r1 = (4 * q[1] - q[0]) / 3;
  const r2 = (4 * q[2] - q[1]) / 3;
  const r = (16 * r2 - r1) / 15;
  return {
    probability: Math.min(1, Math.max(0, r)),
    numericError: Math.abs(r - r2) + 1e-14,
  };
}
