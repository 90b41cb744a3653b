import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { makePlacement } from '../../src/chance/placement.js';
import { robustDispersion } from '../../src/chance/spread.js';
import { robustSpread, scaleCounts, select } from '../../src/judge/dispersion-scaling.js';

describe('scaleCounts', () => {
  it('rounds to whole counts and keeps every non-empty shard non-empty', () => {
    // Worked by hand: 0 stays 0; 1 x 0.25 = 0.25 would round to 0, kept at 1; 10 x 0.25 = 2.5 rounds to 3.
    const out = new Float64Array(3);
    expect(scaleCounts([0, 1, 10], 0.25, out)).toBe(4);
    expect([...out]).toEqual([0, 1, 3]);
  });

  it('returns the sum of what it wrote, and empties stay exactly the empty shards', () => {
    fc.assert(
      fc.property(
        fc.array(fc.nat(5000), { minLength: 1, maxLength: 50 }),
        fc.double({ min: 0.01, max: 1, noNaN: true }),
        (counts, scale) => {
          const out = new Float64Array(counts.length);
          const total = scaleCounts(counts, scale, out);
          expect(total).toBe(out.reduce((sum, value) => sum + value, 0));
          counts.forEach((count, shard) => {
            expect(out[shard] === 0).toBe(count === 0);
            expect(Number.isInteger(out[shard])).toBe(true);
            expect(Math.abs(out[shard] - count * scale)).toBeLessThanOrEqual(
              Math.max(0.5, 1 - count * scale) + 1e-9,
            );
          });
        },
      ),
    );
  });
});

describe('robustSpread', () => {
  it('is 0 for a perfectly even load', () => {
    expect(robustSpread([10, 10, 10, 10], 40, null, new Float64Array(4))).toBe(0);
  });

  it('equals the chance engine robustDispersion (the reference), with and without shares', () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.nat(2000), fc.double({ min: 0.1, max: 10, noNaN: true })), {
          minLength: 1,
          maxLength: 80,
        }),
        fc.boolean(),
        (cells, weighted) => {
          const counts = cells.map(([count]) => count);
          const total = counts.reduce((sum, count) => sum + count, 0);
          const weights = cells.map(([, weight]) => weight);
          const placement = weighted
            ? makePlacement(total, counts.length, weights)
            : makePlacement(total, counts.length);
          const ours = robustSpread(
            counts,
            total,
            placement.shares,
            new Float64Array(counts.length),
          );
          const reference = robustDispersion(placement, counts);
          expect(ours).toBeCloseTo(reference, 9);
        },
      ),
      { numRuns: 300 },
    );
  });
});

describe('robustSpread with one shard expected to load', () => {
  it('reads its residual, not what the rest of the scratch buffer holds', () => {
    // Worked by hand: shares [1, 0, 0], counts [7, 3, 0], N = 10: expected 10 on shard 0,
    // residual (7 - 10)^2 / 10 = 0.9, over the chi-square(1) median 0.4549364 (R qchisq(0.5, 1)).
    const scratch = new Float64Array(3);
    const shares = Float64Array.from([1, 0, 0]);
    expect(robustSpread([7, 3, 0], 10, shares, scratch)).toBeCloseTo(0.9 / 0.4549364, 6);
  });
});

describe('select (simple-statistics quickselect over a prefix)', () => {
  it('returns the k-th smallest of the prefix and leaves no larger value before it', () => {
    // Reference: a full numeric sort of the same prefix (common practice).
    fc.assert(
      fc.property(
        fc.array(fc.double({ min: -1e6, max: 1e6, noNaN: true }), {
          minLength: 1,
          maxLength: 1500,
        }),
        fc.nat(40),
        fc.nat(),
        (prefix, extra, at) => {
          const values = new Float64Array(prefix.length + extra).fill(-1e9);
          values.set(prefix);
          const k = at % prefix.length;
          const sorted = [...prefix].sort((a, b) => a - b);
          expect(select(values, prefix.length, k)).toBe(sorted[k]);
          for (let i = 0; i < k; i++) expect(values[i]).toBeLessThanOrEqual(values[k]);
          expect([...values.subarray(0, prefix.length)].sort((a, b) => a - b)).toEqual(sorted);
          for (let i = prefix.length; i < values.length; i++) expect(values[i]).toBe(-1e9);
        },
      ),
      { numRuns: 300 },
    );
  });
});
