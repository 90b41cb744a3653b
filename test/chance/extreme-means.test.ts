// Means of the fullest and emptiest relative loads on unequal shares, against references
// computed outside the project.
import { describe, expect, it } from 'vitest';
import { emptiestMean, fullestMean } from '../../src/chance/extreme-means.js';
import { makePlacement } from '../../src/chance/placement.js';
import weightedMeans from './reference/weighted-means.json' with { type: 'json' };

describe('fullestMean and emptiestMean', () => {
  it('documented examples: 2 requests on 2 shards, 1.5 and 0.5 (worked by hand)', () => {
    expect(fullestMean(makePlacement(2, 2))).toBeCloseTo(1.5, 12);
    expect(emptiestMean(makePlacement(2, 2))).toBeCloseTo(0.5, 12);
  });
});

describe('means of the fullest and emptiest relative loads on unequal shares', () => {
  // Reference: reference/weighted-means.json from make-weighted-mean-reference.py (scipy
  // 1.17.1 binom.pmf summed over every outcome for two and three shards; numpy Monte Carlo
  // with its standard error for 200 shards).
  it('equal the exact sums over every outcome for two and three shards', () => {
    // Measured on main before the step-by-step sum: off by up to 2e-4 (3 shards, N = 300),
    // the trapezoid rule on 1025 tails; with shares 1e-6 : 1 : 1000 the fullest mean was
    // 304125 for 1 request (3 exactly: each shard, if hit, reads 1 / p_i) and 610 for 1000.
    for (const c of weightedMeans.exact) {
      const placement = makePlacement(c.requests, c.weights.length, Float64Array.from(c.weights));
      const max = fullestMean(placement);
      const min = emptiestMean(placement);
      expect(Math.abs(max - c.max), `max, N = ${c.requests}`).toBeLessThan(1e-9 * c.max);
      expect(Math.abs(min - c.min), `min, N = ${c.requests}`).toBeLessThan(1e-9 * c.min + 1e-12);
    }
  });

  it('agree with Monte Carlo within 4 standard errors (200 shards; shares 1e-6 : 1 : 1000)', () => {
    // Measured on main before: 3.21 for the fullest mean of 1e6 requests on 1e-6 : 1 : 1000
    // (Monte Carlo 2.013 +- 0.010), 1.3725 for 1e9 (1.3683 +- 0.0002).
    for (const c of weightedMeans.sampled) {
      const weights =
        c.weights !== undefined
          ? Float64Array.from(c.weights)
          : Float64Array.from({ length: 200 }, (_, i) =>
              c.weightsRule.startsWith('1 + (i mod 5)') ? 1 + (i % 5) / 4 : 1 + i / 199,
            );
      const placement = makePlacement(c.requests, weights.length, weights);
      expect(Math.abs(fullestMean(placement) - c.max)).toBeLessThan(4 * c.maxSe);
      expect(Math.abs(emptiestMean(placement) - c.min)).toBeLessThan(4 * c.minSe);
    }
  }, 60_000);
});
