import { describe, expect, it } from 'vitest';
import { emptyShardMoments, emptyShardsTail } from '../../src/chance/empty-shards.js';
import { makePlacement } from '../../src/chance/placement.js';
import { reference, relativeError } from './reference-data.js';

describe('empty shards', () => {
  it('mean is m (1 - 1/m)^N and N = m gives about m/e (classical occupancy problem, Feller vol. 1)', () => {
    for (const [m, n] of [
      [10, 7],
      [365, 23],
      [1000, 5000],
    ] as const) {
      expect(
        relativeError(emptyShardMoments(makePlacement(n, m)).mean, m * (1 - 1 / m) ** n),
      ).toBeLessThan(1e-12);
    }
    const m = 100000;
    expect(relativeError(emptyShardMoments(makePlacement(m, m)).mean, m / Math.E)).toBeLessThan(
      1e-4,
    );
  });

  const exact = reference.empty;
  it('mean and variance match exact occupancy probabilities (exact Stirling numbers, python-flint)', () => {
    for (const c of exact.filter((e) => e.mean !== undefined)) {
      const moments = emptyShardMoments(makePlacement(c.requests, c.shards));
      expect(relativeError(moments.mean, c.mean!)).toBeLessThan(1e-9);
      expect(relativeError(moments.variance, c.variance!)).toBeLessThan(1e-7);
    }
  });

  it('one request leaves exactly m - 1 shards empty: variance 0, not rounding (worked by hand)', () => {
    // Measured on main before: 1.1e-16 on shares 1e-9 : 1 : 2, which odds printed.
    for (const weights of [
      [1e-9, 1, 2],
      [1, 2, 3, 4],
      [0.25, 0.25, 0.5],
    ]) {
      const moments = emptyShardMoments(makePlacement(1, weights.length, weights));
      expect(moments.variance).toBe(0);
      expect(moments.mean).toBeCloseTo(weights.length - 1, 12);
    }
    // Two requests on m equal shares: E is m - 1 with chance 1/m, else m - 2, so the
    // variance is (1/m)(1 - 1/m), about 1/(2m) of the diagonal sum q (1 - q) that cancels
    // against the pair terms. Measured on main before: 5.6e-8 at m = 1e9 (56 times too
    // big; 1 - q was formed as 1 - (1 - 1/m)^2). At m = 1e13 it must survive the floor.
    for (const [m, bar] of [
      [1e3, 1e-9],
      [1e6, 1e-6],
      [1e9, 1e-5],
      [1e11, 1e-4],
      [1e13, 1e-2],
    ]) {
      const variance = emptyShardMoments(makePlacement(2, m)).variance;
      expect(relativeError(variance, (1 / m) * (1 - 1 / m)), `m = ${m}`).toBeLessThan(bar);
    }
  });

  it('the weighted variance formula with equal weights equals the equal-share one (pair sum identity)', () => {
    const weights = new Array(40).fill(1);
    weights[0] = 1 + 1e-12; // forces the weighted path
    const weighted = emptyShardMoments(makePlacement(60, 40, weights));
    const equal = emptyShardMoments(makePlacement(60, 40));
    expect(relativeError(weighted.variance, equal.variance)).toBeLessThan(1e-6);
  });

  const tails = exact.filter((e) => e.atLeast !== undefined && e.p! >= 1e-15);
  it(`P(E >= e) matches exact occupancy (${tails.length} cases) within 1e-3 relative`, () => {
    const failures: string[] = [];
    for (const c of tails) {
      const p = Math.exp(
        emptyShardsTail(makePlacement(c.requests, c.shards), c.atLeast!).logProbability,
      );
      if (!(relativeError(p, c.p!) <= 1e-3))
        failures.push(`m=${c.shards} N=${c.requests} e=${c.atLeast}: ${p} vs ${c.p}`);
    }
    expect(failures).toEqual([]);
  });

  it('many requests per shard: exact terms answer, not the N min(N, m) chain, and match exact occupancy (python-flint)', () => {
    // m = 1024 with N = 10 000 and 20 000: the chain would take 1e7-2e7 steps (tens to
    // hundreds of ms) where a handful of point probabilities answer.
    const cases = exact.filter(
      (e) => e.atLeast !== undefined && e.shards === 1024 && e.requests >= 10000,
    );
    expect(cases.length).toBeGreaterThan(5);
    for (const c of cases) {
      const tail = emptyShardsTail(makePlacement(c.requests, c.shards), c.atLeast!);
      expect(tail.method).toBe('exact-terms');
      expect(relativeError(Math.exp(tail.logProbability), c.p!)).toBeLessThan(1e-3);
    }
  });

  it('few requests per shard: the chain answers where point probabilities would convolve', () => {
    // m = 64, N = 64: every box probability of the summed terms takes its exact convolution.
    const tail = emptyShardsTail(makePlacement(64, 64), 23);
    expect(tail.method).toBe('exact');
  });

  it('unequal shares beyond one empty shard: conservative in the upper tail (p <= 0.3), at most 5% low above it (exact occupancy, python-flint)', () => {
    // Weights 1 and 1 + 1e-12 make the weighted path run on an equal-share problem with a known exact answer.
    const cases = exact.filter((e) => e.atLeast !== undefined && e.atLeast >= 2 && e.p! >= 1e-12);
    expect(cases.length).toBeGreaterThan(100);
    const failures: string[] = [];
    for (const c of cases) {
      const weights = new Array(c.shards).fill(1);
      weights[0] = 1 + 1e-12;
      const tail = emptyShardsTail(makePlacement(c.requests, c.shards, weights), c.atLeast!);
      const p = Math.exp(tail.logProbability);
      const ok = c.p! <= 0.3 ? p >= c.p! * (1 - 1e-9) : p >= c.p! * 0.95;
      if (!ok)
        failures.push(
          `m=${c.shards} N=${c.requests} e=${c.atLeast}: ${p} vs ${c.p} (${tail.method})`,
        );
    }
    expect(failures).toEqual([]);
  });
});
