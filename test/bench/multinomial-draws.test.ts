import { describe, expect, it } from 'vitest';
import { MultinomialDraws } from '../../bench/multinomial-draws.js';

// The calibration runs rest on these draws being Multinomial(N, p). Checked against the
// multinomial's own moments (common practice): E[x_i] = N p_i, Var x_i = N p_i (1 - p_i),
// Cov(x_i, x_j) = -N p_i p_j, with tolerances of 5 Monte Carlo standard errors.

function moments(total: number, shares: Float64Array | null, m: number, draws: number) {
  const sampler = new MultinomialDraws(42);
  const sum = new Float64Array(m);
  const squares = new Float64Array(m);
  let cross = 0;
  for (let draw = 0; draw < draws; draw++) {
    const counts = sampler.draw(total, shares, new Float64Array(m));
    expect(counts.reduce((a, b) => a + b, 0)).toBe(total);
    for (let i = 0; i < m; i++) {
      expect(Number.isInteger(counts[i]) && counts[i] >= 0).toBe(true);
      sum[i] += counts[i];
      squares[i] += counts[i] * counts[i];
    }
    cross += counts[0] * counts[1];
  }
  const mean = Array.from(sum, (s) => s / draws);
  const variance = Array.from(squares, (q, i) => q / draws - mean[i] * mean[i]);
  return { mean, variance, covariance01: cross / draws - mean[0] * mean[1] };
}

describe('MultinomialDraws', () => {
  it.each([
    [10, 8],
    [5000, 8],
    [3, 40],
  ])('has the multinomial mean, variance and covariance (N = %i, %i equal shards)', (total, m) => {
    const draws = 4000;
    const p = 1 / m;
    const { mean, variance, covariance01 } = moments(total, null, m, draws);
    const expectedVariance = total * p * (1 - p);
    for (let i = 0; i < m; i++) {
      expect(Math.abs(mean[i] - total * p)).toBeLessThan(5 * Math.sqrt(expectedVariance / draws));
      // The sample variance of a near-normal count has standard error about var sqrt(2 / draws).
      expect(Math.abs(variance[i] - expectedVariance)).toBeLessThan(
        5 * expectedVariance * Math.sqrt(2 / draws) + 0.05,
      );
    }
    expect(Math.abs(covariance01 + total * p * p)).toBeLessThan(
      5 * expectedVariance * Math.sqrt(2 / draws) + 0.05,
    );
  });

  it('follows unequal shares and never fills a shard of share 0', () => {
    const shares = Float64Array.from([0.5, 0.3, 0.2, 0]);
    const { mean } = moments(1000, shares, 4, 2000);
    [500, 300, 200, 0].forEach((expected, i) => {
      const sd = Math.sqrt(1000 * shares[i] * (1 - shares[i]));
      expect(Math.abs(mean[i] - expected)).toBeLessThanOrEqual(5 * (sd / Math.sqrt(2000)));
    });
    expect(mean[3]).toBe(0);
  });

  it('gives the same counts for the same seed', () => {
    const a = new MultinomialDraws(9).draw(1000, null, new Float64Array(16));
    const b = new MultinomialDraws(9).draw(1000, null, new Float64Array(16));
    expect([...a]).toEqual([...b]);
  });
});
