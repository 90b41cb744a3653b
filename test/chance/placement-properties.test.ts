import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { boxLogProbability } from '../../src/chance/box-probability.js';
import { anyShardTail } from '../../src/chance/extreme-load.js';
import { makePlacement } from '../../src/chance/placement.js';
import { emptiestTail, fullestTail } from '../../src/chance/shard-extremes.js';
import { RandomDraws } from '../../src/scenario/random-draws.js';
import { wilsonInterval } from '../../src/scenario/two-choice-placement.js';

// Properties every probability law must have (common practice), checked on random small
// cases with fast-check 4.10 (seeded so a failure reproduces).
const settings = { numRuns: 60, seed: 20261201 };

describe('properties of the fullest-shard law', () => {
  it('P(max >= k) is in [0, 1], falls as k grows, and P(max >= k) + P(max <= k - 1) = 1', () => {
    fc.assert(
      fc.property(fc.integer({ min: 2, max: 400 }), fc.integer({ min: 1, max: 3000 }), (m, n) => {
        let previous = 1;
        const fair = n / m;
        for (let k = Math.ceil(fair); k <= Math.ceil(fair) + 12; k++) {
          const p = Math.exp(
            anyShardTail('high', n, [{ share: 1 / m, count: m, threshold: k }]).logProbability,
          );
          expect(p).toBeGreaterThanOrEqual(0);
          expect(p).toBeLessThanOrEqual(1);
          expect(p).toBeLessThanOrEqual(previous * (1 + 1e-9));
          previous = p;
          const none = Math.exp(
            boxLogProbability(n, [{ share: 1 / m, count: m, lower: 0, upper: k - 1 }])
              .logProbability,
          );
          // Each side carries its own method error, at most 1e-3 relative (docs/model.md bar).
          expect(Math.abs(p + none - 1)).toBeLessThanOrEqual(1e-3 * Math.min(p, none) + 1e-12);
        }
      }),
      settings,
    );
  });

  it('splitting one share class into two with the same share changes nothing (weighted = equal with equal weights)', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 3, max: 300 }),
        fc.integer({ min: 1, max: 2000 }),
        fc.integer({ min: 1, max: 6 }),
        (m, n, extra) => {
          const k = Math.ceil(n / m) + extra;
          const a = Math.floor(m / 3);
          const one = anyShardTail('high', n, [
            { share: 1 / m, count: m, threshold: k },
          ]).logProbability;
          const two = anyShardTail('high', n, [
            { share: 1 / m, count: a, threshold: k },
            { share: 1 / m, count: m - a, threshold: k },
          ]).logProbability;
          expect(Math.abs(Math.exp(one) - Math.exp(two))).toBeLessThan(
            2e-3 * Math.exp(one) + 1e-300,
          );
        },
      ),
      settings,
    );
  });

  it('is invariant under a permutation of the shards (weighted shares)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.integer({ min: 1, max: 20 }), { minLength: 3, maxLength: 12 }),
        fc.integer({ min: 10, max: 600 }),
        fc.double({ min: 1.05, max: 3, noNaN: true }),
        (weights, n, t) => {
          const reversed = [...weights].reverse();
          const p1 = fullestTail(makePlacement(n, weights.length, weights), t).logProbability;
          const p2 = fullestTail(makePlacement(n, reversed.length, reversed), t).logProbability;
          expect(p1).toBe(p2);
          const q1 = emptiestTail(makePlacement(n, weights.length, weights), 1 / t).logProbability;
          const q2 = emptiestTail(
            makePlacement(n, reversed.length, reversed),
            1 / t,
          ).logProbability;
          expect(q1).toBe(q2);
        },
      ),
      settings,
    );
  });
});

describe('Monte Carlo cross-check, weighted shares (seeded; 99.9% Wilson interval)', () => {
  it('P(max relative load >= t) for 40 unequal shards and 1500 requests', () => {
    const draws = new RandomDraws(7);
    const weights = Array.from({ length: 40 }, (_, i) => 1 + (i % 5));
    const total = weights.reduce((a, b) => a + b, 0);
    const cumulative = weights.map(
      (_, i) => weights.slice(0, i + 1).reduce((a, b) => a + b, 0) / total,
    );
    const n = 1500;
    const t = 1.55;
    const runs = 6000;
    let hits = 0;
    const counts = new Float64Array(40);
    for (let r = 0; r < runs; r++) {
      counts.fill(0);
      for (let i = 0; i < n; i++) {
        const u = draws.uniform();
        let lo = 0;
        let hi = 39;
        while (lo < hi) {
          const mid = (lo + hi) >> 1;
          if (cumulative[mid] > u) hi = mid;
          else lo = mid + 1;
        }
        counts[lo]++;
      }
      let max = 0;
      for (let i = 0; i < 40; i++) max = Math.max(max, counts[i] / ((n * weights[i]) / total));
      if (max >= t) hits++;
    }
    const p = Math.exp(fullestTail(makePlacement(n, 40, weights), t).logProbability);
    const [low, high] = wilsonInterval(hits, runs, 3.29);
    expect(p).toBeGreaterThanOrEqual(low);
    expect(p).toBeLessThanOrEqual(high);
  });
});
