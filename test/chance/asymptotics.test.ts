import { describe, expect, it } from 'vitest';
import { gonnetExpectedMaximum, raabStegerMaximum } from '../../src/chance/asymptotics.js';
import { makePlacement } from '../../src/chance/placement.js';
import { fullestQuantile } from '../../src/chance/shard-extremes.js';
import { fullestMean } from '../../src/chance/extreme-means.js';

describe('asymptotic cross-checks (shown in plan, never used for verdicts)', () => {
  it('Gonnet (1981): E[max] for N = m is Gamma^-1(m) - 3/2 + o(1); the exact mean is within 0.5 at m = 1e5', () => {
    const m = 100000;
    const exact = fullestMean(makePlacement(m, m)) * 1; // relative load = count when N = m
    expect(Math.abs(exact - gonnetExpectedMaximum(m))).toBeLessThan(0.5);
  });

  it('Gamma^-1(24) = 5 since Gamma(5) = 24 (definition, worked by hand)', () => {
    expect(gonnetExpectedMaximum(24) + 1.5).toBeCloseTo(5, 9);
  });

  it('Raab and Steger (1998), heavy regime N >> m (log m)^3: the exact median excess over the fair share is within 10%', () => {
    const m = 1000;
    const n = 1e9;
    const fair = n / m;
    const exactMedian = fullestQuantile(makePlacement(n, m), 0.5) * fair;
    const estimate = raabStegerMaximum(n, m);
    expect(estimate.regime).toBe('N >> m (log m)^3');
    // The estimate is a leading-order form: compare the excess over the fair share to 10%.
    expect(Math.abs(estimate.count! - exactMedian) / (exactMedian - fair)).toBeLessThan(0.1);
  });
});
