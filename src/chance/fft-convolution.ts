/**
 * Convolution of two non-negative sequences by the fast Fourier transform
 * (Cooley and Tukey 1965, "An algorithm for the machine calculation of complex Fourier
 * series", Math. Comp. 19), for the exact branch of the box probabilities when the
 * supports are too wide for the direct O(n m) product.
 *
 * Error: each output carries an absolute error of about 1e-16 * log2(n) times the largest
 * output, so values near the peak (which is where the box probability reads its answer,
 * the saddle point putting N at the centre) keep about 14 digits; values far below the
 * peak are noise and are clamped at 0. Cost O(n log n) for output length n.
 * `twiddles` gives the tables of a transform size (by default computed afresh, O(n); a
 * ChanceCache's `twiddles` keeps them).
 * Example: fftConvolve([1, 1], [1, 1]) = [1, 2, 1].
 */
export function fftConvolve(
  a: Float64Array,
  b: Float64Array,
  twiddles: (n: number) => Twiddles = twiddleTables,
): Float64Array {
  const length = a.length + b.length - 1;
  let size = 1;
  while (size < length) size <<= 1;
  const aRe = new Float64Array(size);
  const aIm = new Float64Array(size);
  const bRe = new Float64Array(size);
  const bIm = new Float64Array(size);
  aRe.set(a);
  bRe.set(b);
  const tables = twiddles(size);
  transform(aRe, aIm, false, tables);
  transform(bRe, bIm, false, tables);
  for (let i = 0; i < size; i++) {
    const re = aRe[i] * bRe[i] - aIm[i] * bIm[i];
    const im = aRe[i] * bIm[i] + aIm[i] * bRe[i];
    aRe[i] = re;
    aIm[i] = im;
  }
  transform(aRe, aIm, true, tables);
  const out = new Float64Array(length);
  for (let i = 0; i < length; i++) {
    const v = aRe[i] / size;
    out[i] = v > 0 ? v : 0;
  }
  return out;
}

/** cos and sin of 2 pi k / n for k < n / 2, the twiddle factors of a transform of size n. */
export interface Twiddles {
  readonly cosTable: Float64Array;
  readonly sinTable: Float64Array;
}

/**
 * The twiddle tables of size n, each entry from Math.cos/sin (no drifting recurrence). A
 * pure function of n: fftConvolve takes a source of them, so that a caller repeating sizes
 * (a box's convolutions) keeps them in its ChanceCache (chance-cache.ts). O(n).
 */
export function twiddleTables(n: number): Twiddles {
  const cosTable = new Float64Array(n / 2);
  const sinTable = new Float64Array(n / 2);
  for (let k = 0; k < n / 2; k++) {
    const angle = (2 * Math.PI * k) / n;
    cosTable[k] = Math.cos(angle);
    sinTable[k] = Math.sin(angle);
  }
  return { cosTable, sinTable };
}

/** In-place iterative radix-2 transform; twiddles from Math.cos/sin per index (no drifting recurrence). */
function transform(
  re: Float64Array,
  im: Float64Array,
  inverse: boolean,
  { cosTable, sinTable }: Twiddles,
): void {
  const n = re.length;
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1;
    for (; j & bit; bit >>= 1) j ^= bit;
    j ^= bit;
    if (i < j) {
      let t = re[i];
      re[i] = re[j];
      re[j] = t;
      t = im[i];
      im[i] = im[j];
      im[j] = t;
    }
  }
  const sign = inverse ? 1 : -1;
  for (let len = 2; len <= n; len <<= 1) {
    const half = len >> 1;
    const stride = n / len;
    for (let start = 0; start < n; start += len) {
      for (let k = 0; k < half; k++) {
        const wr = cosTable[k * stride];
        const wi = sign * sinTable[k * stride];
        const i = start + k;
        const j = i + half;
        const xr = re[j] * wr - im[j] * wi;
        const xi = re[j] * wi + im[j] * wr;
        re[j] = re[i] - xr;
        im[j] = im[i] - xi;
        re[i] += xr;
        im[i] += xi;
      }
    }
  }
}
