import { describe, expect, it } from 'vitest';
import { ringShares } from '../../src/scenario/consistent-hash-ring.js';
import { RandomDraws } from '../../src/scenario/random-draws.js';

function coefficientOfVariation(values: Float64Array): number {
  const mean = values.reduce((sum, value) => sum + value, 0) / values.length;
  const variance =
    values.reduce((sum, value) => sum + (value - mean) ** 2, 0) / (values.length - 1);
  return Math.sqrt(variance) / mean;
}

describe('ringShares', () => {
  it('gives every shard a positive share, summing to 1', () => {
    const shares = ringShares(64, 16, new RandomDraws(1));
    expect(shares.length).toBe(64);
    expect(shares.every((share) => share > 0)).toBe(true);
    // Tolerance: 1024 arc lengths summed in doubles.
    expect(Math.abs(shares.reduce((sum, share) => sum + share, 0) - 1)).toBeLessThan(1e-12);
  });

  it('has a share spread of about 1/sqrt(tokens per shard)', () => {
    // docs/model.md ("Shares are rarely equal"): CV about 1/sqrt(v). Worked out: a shard's share is a sum
    // of v of the m v Dirichlet(1, ..., 1) arcs, and the expected sample variance of the m shares
    // gives CV^2 = m / (m v + 1), which is 1/v to within 1/(m v). Tolerance: 5 standard errors of a
    // 20-seed mean of sample CVs, about 10% relative for v >= 16 (near-normal shares) and 20% for
    // v = 1 (exponential arcs, kurtosis 9).
    for (const [tokens, relativeTolerance] of [
      [1, 0.2],
      [16, 0.1],
      [128, 0.1],
    ]) {
      let total = 0;
      for (let seed = 0; seed < 20; seed++) {
        total += coefficientOfVariation(ringShares(64, tokens, new RandomDraws(seed)));
      }
      const expected = Math.sqrt(64 / (64 * tokens + 1));
      expect(Math.abs(total / 20 / expected - 1), `v = ${tokens}`).toBeLessThan(relativeTolerance);
    }
  });

  it('is a pure function of the draws', () => {
    expect(ringShares(8, 4, new RandomDraws(9))).toEqual(ringShares(8, 4, new RandomDraws(9)));
  });
});
