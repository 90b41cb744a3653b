import { describe, expect, it } from 'vitest';
import { fftConvolve } from '../../src/chance/fft-convolution.js';

describe('fftConvolve', () => {
  it('documented example: [1, 1] * [1, 1] = [1, 2, 1]', () => {
    const out = fftConvolve(Float64Array.of(1, 1), Float64Array.of(1, 1));
    expect([...out].map((v) => Math.round(v * 1e12) / 1e12)).toEqual([1, 2, 1]);
  });

  it('equals the direct product on binomial rows, sizes that reuse and do not reuse kept twiddles', () => {
    // Row n of Pascal's triangle convolved with row k is row n + k (Vandermonde's identity).
    const row = (n: number) => {
      const r = new Float64Array(n + 1);
      r[0] = 1;
      for (let i = 1; i <= n; i++) r[i] = (r[i - 1] * (n - i + 1)) / i;
      return r;
    };
    for (const [n, k] of [
      [20, 30],
      [20, 30],
      [300, 212],
    ]) {
      const out = fftConvolve(row(n), row(k));
      const want = row(n + k);
      const peak = Math.max(...want);
      for (let i = 0; i < want.length; i++)
        expect(Math.abs(out[i] - want[i])).toBeLessThan(1e-13 * peak);
    }
  });
});
