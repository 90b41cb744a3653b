import { describe, expect, it } from 'vitest';
import { loadHistogram, loadHistogramRange } from '../../src/judge/spread-histogram.js';

/**
 * Binomial(n, 1/d) point probabilities from the definition, C(n, k) (d-1)^(n-k) / d^n, in
 * exact integer arithmetic (BigInt) and rounded once: the reference for the prediction.
 */
function exactBinomial(n: number, d: number): number[] {
  const denominator = BigInt(d) ** BigInt(n);
  const out: number[] = [];
  let choose = 1n;
  for (let k = 0; k <= n; k++) {
    if (k > 0) choose = (choose * BigInt(n - k + 1)) / BigInt(k);
    const numerator = choose * BigInt(d - 1) ** BigInt(n - k);
    // Scaled to keep 15 digits through the division.
    out.push(Number((numerator * 10n ** 18n) / denominator) / 1e18);
  }
  return out;
}

describe('loadHistogram', () => {
  it('predicts each bin as m times the binomial mass of its counts (exact reference)', () => {
    // 4 equal shards, 40 requests: fair share 10; bins of 0.25x from 0.5x to 1.5x hold the
    // counts 5-7, 8-9, 10-12, 13-14 (a count k falls in [a, b) when a <= k/10 < b).
    const counts = [10, 12, 3, 15];
    const histogram = loadHistogram({
      counts,
      total: 40,
      judgedTotal: 40,
      shares: null,
      low: 0.5,
      high: 1.5,
      bins: 4,
    });
    const pmf = exactBinomial(40, 4);
    const mass = (from: number, to: number) =>
      pmf.slice(from, to + 1).reduce((sum, p) => sum + p, 0);
    const expected = [
      mass(0, 4),
      mass(5, 7),
      mass(8, 9),
      mass(10, 12),
      mass(13, 14),
      mass(15, 40),
    ].map((p) => 4 * p);
    histogram.expected.forEach((value, bin) => expect(value).toBeCloseTo(expected[bin], 12));
    // Observed: 3 -> below, 10 and 12 -> [1, 1.25), 15 -> at or above 1.5.
    expect(Array.from(histogram.observed)).toEqual([1, 0, 0, 2, 0, 1]);
    expect(histogram.predictedRequests).toBe(40);
    expect(histogram.groupedShares).toBe(false);
  });

  it('accounts for every shard, observed and expected (to 1e-9)', () => {
    const m = 64;
    const counts = Array.from({ length: m }, (_, shard) => 900 + ((shard * 37) % 200));
    const total = counts.reduce((sum, count) => sum + count, 0);
    const range = loadHistogramRange(1.13, 0.87);
    const histogram = loadHistogram({
      counts,
      total,
      judgedTotal: total,
      shares: null,
      ...range,
      bins: 120,
    });
    expect(histogram.observed.reduce((sum, count) => sum + count, 0)).toBe(m);
    expect(histogram.expected.reduce((sum, value) => sum + value, 0)).toBeCloseTo(m, 9);
  });

  it('evaluates unequal shares per share, each shard against its own fair share', () => {
    // Shares 1/2, 1/4, 1/4 of 80 requests: fair shares 40, 20, 20. Loads exactly fair put
    // every shard in the bin holding 1x; the prediction is the sum of the two laws' masses.
    const histogram = loadHistogram({
      counts: [40, 20, 20],
      total: 80,
      judgedTotal: 80,
      shares: [2, 1, 1],
      low: 0.5,
      high: 1.5,
      bins: 2,
    });
    expect(Array.from(histogram.observed)).toEqual([0, 0, 3, 0]);
    const half = exactBinomial(80, 2);
    const quarter = exactBinomial(80, 4);
    const mass = (pmf: number[], from: number, to: number) =>
      pmf.slice(from, to + 1).reduce((sum, p) => sum + p, 0);
    // [1x, 1.5x): counts 40-59 at fair share 40, 20-29 at fair share 20.
    expect(histogram.expected[2]).toBeCloseTo(mass(half, 40, 59) + 2 * mass(quarter, 20, 29), 12);
  });

  it('predicts a wider spread on a robust (smaller) judged total', () => {
    const counts = Array.from({ length: 64 }, () => 1000);
    const common = { counts, total: 64_000, shares: null, low: 0.8, high: 1.2, bins: 24 };
    const exact = loadHistogram({ ...common, judgedTotal: 64_000 });
    const robust = loadHistogram({ ...common, judgedTotal: 64_000 / 4 });
    const edges = (h: typeof exact) => h.expected[0] + h.expected[h.bins + 1];
    expect(edges(robust)).toBeGreaterThan(edges(exact) * 10);
    expect(robust.predictedRequests).toBe(16_000);
    // The observed loads do not depend on the judged total.
    expect(Array.from(robust.observed)).toEqual(Array.from(exact.observed));
  });

  it('groups many distinct shares and says so', () => {
    const m = 200;
    const shares = Array.from({ length: m }, (_, shard) => 1 + shard / m);
    const counts = shares.map((share) => Math.round(share * 100));
    const total = counts.reduce((sum, count) => sum + count, 0);
    const histogram = loadHistogram({
      counts,
      total,
      judgedTotal: total,
      shares,
      low: 0.5,
      high: 1.5,
      bins: 10,
    });
    expect(histogram.groupedShares).toBe(true);
    expect(histogram.expected.reduce((sum, value) => sum + value, 0)).toBeCloseTo(m, 6);
  });

  it('rejects a window without requests and a bad range', () => {
    const base = {
      counts: [0, 0],
      total: 0,
      judgedTotal: 0,
      shares: null,
      low: 0.5,
      high: 1.5,
      bins: 4,
    };
    expect(() => loadHistogram(base)).toThrow(RangeError);
    expect(() =>
      loadHistogram({ ...base, counts: [1, 1], total: 2, judgedTotal: 2, low: 2 }),
    ).toThrow(RangeError);
  });
});

describe('loadHistogramRange', () => {
  it('widens the chance band by half of each side, mirroring a missing floor', () => {
    const withFloor = loadHistogramRange(1.2, 0.9);
    expect(withFloor.low).toBeCloseTo(0.85, 12);
    expect(withFloor.high).toBeCloseTo(1.3, 12);
    const mirrored = loadHistogramRange(1.2, null);
    expect(mirrored.low).toBeCloseTo(0.7, 12);
    expect(loadHistogramRange(4, 0).low).toBe(0);
  });
});
