import { describe, expect, it } from 'vitest';
import { makePlacement } from '../../src/chance/placement.js';
import { CHI_SQUARE_ONE_MEDIAN, robustDispersion, spreadTest } from '../../src/chance/spread.js';
import { reference, relativeError } from './reference-data.js';

describe('spread', () => {
  it('chi-square upper tail matches mpmath.gammainc (reference/exact.json) within 1e-6 relative (rounding of the built counts)', () => {
    for (const c of reference.chiSquare) {
      if (c.upper < 1e-300) continue;
      // Equal shares with many requests per shard: Haldane's variance is 2(m-1) + (m^2 - m^2 - 2m + 2)/N ~ 2(m-1).
      const m = c.df + 1;
      const n = 1e15;
      const fair = n / m;
      // Counts whose X^2 equals x: put the whole excess on one pair of shards.
      const counts = new Float64Array(m).fill(fair);
      const d = Math.sqrt((c.x * fair) / 2);
      counts[0] += d;
      counts[1] -= d;
      const s = spreadTest(makePlacement(n, m), counts);
      expect(relativeError(s.chiSquare, c.x)).toBeLessThan(1e-6);
      expect(relativeError(Math.exp(s.logProbability), c.upper)).toBeLessThan(1e-6);
    }
  });

  it("mean and variance of X^2 under unequal shares match Haldane's (1937) formulas by exact enumeration", () => {
    // Exhaustive: 3 shards with shares 1/2, 1/3, 1/6 and N = 7 requests; every placement weighed.
    const shares = [1 / 2, 1 / 3, 1 / 6];
    const n = 7;
    let mean = 0;
    let second = 0;
    const logFact = (k: number): number => (k <= 1 ? 0 : Math.log(k) + logFact(k - 1));
    for (let a = 0; a <= n; a++) {
      for (let b = 0; a + b <= n; b++) {
        const c = n - a - b;
        const p = Math.exp(
          logFact(n) -
            logFact(a) -
            logFact(b) -
            logFact(c) +
            a * Math.log(shares[0]) +
            b * Math.log(shares[1]) +
            c * Math.log(shares[2]),
        );
        const x = [a, b, c].reduce((s, v, i) => s + (v - n * shares[i]) ** 2 / (n * shares[i]), 0);
        mean += p * x;
        second += p * x * x;
      }
    }
    const s = spreadTest(makePlacement(n, 3, [3, 2, 1]), [4, 2, 1]);
    expect(mean).toBeCloseTo(2, 10); // E[X^2] = m - 1 exactly
    expect(relativeError(s.nullVariance, second - mean * mean)).toBeLessThan(1e-10);
  });

  it('dispersion is 1 on average and the robust dispersion ignores one hot shard', () => {
    const m = 1000;
    const counts = new Float64Array(m).fill(100);
    for (let i = 0; i < m; i++) counts[i] += i % 2 === 0 ? 10 : -10; // squared residual 1 everywhere
    counts[0] = 400;
    const placement = makePlacement(
      counts.reduce((a, b) => a + b, 0),
      m,
    );
    expect(spreadTest(placement, counts).dispersion).toBeGreaterThan(1.8); // (about 1000 + 900) / 999, worked by hand
    const robust = robustDispersion(placement, counts);
    // Median squared residual is about 1 (the hot shard moves the fair share by 0.3%), so
    // robust phi ~ 1 / 0.4549 (median of chi-square(1) = 0.454936, published tables).
    expect(robust).toBeGreaterThan(1.5);
    expect(robust).toBeLessThan(3);
    expect(CHI_SQUARE_ONE_MEDIAN).toBeCloseTo(0.4549364, 6);
  });
});
