import { existsSync, readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { ringWeights } from '../../bench/ring-weights.js';
import { anyShardTail } from '../../src/chance/extreme-load.js';
import { sweptShardTail } from '../../src/chance/swept-tail.js';
import { makePlacement, roundingSlack, shareClasses } from '../../src/chance/placement.js';
import { shareSweep, type Side } from '../../src/chance/share-sweep/sorted-shares.js';
import { sweepTails } from '../../src/chance/share-sweep/tail-sums.js';
import {
  emptiestQuantile,
  emptiestTail,
  fullestQuantile,
  fullestTail,
} from '../../src/chance/shard-extremes.js';
import { relativeError } from './reference-data.js';

const TOLERANCE = 1e-3; // docs/model.md accuracy bar: relative error <= 1e-3 for p in [1e-15, 1]

/** The grouped engine's own question: one threshold group per distinct share. */
function groupedTail(n: number, weights: Float64Array, relative: number, side: Side) {
  const placement = makePlacement(n, weights.length, weights);
  const groups = shareClasses(placement).map((c) => {
    const x = relative * (n * c.share);
    const threshold =
      side === 'high' ? Math.ceil(x - roundingSlack(x)) : Math.floor(x + roundingSlack(x));
    return { share: c.share, count: c.count, threshold };
  });
  return anyShardTail(side, n, groups);
}

interface SweepCase {
  weights: number[];
  requests: number;
  relative: [number, number];
  p: number;
}

const referencePath = new URL('./reference/sweep-exact.json', import.meta.url);
const sweepReference: { sweepMax: SweepCase[]; sweepMin: SweepCase[] } = existsSync(referencePath)
  ? JSON.parse(readFileSync(referencePath, 'utf8'))
  : { sweepMax: [], sweepMin: [] };

describe('share sweeps (many weighted shards)', () => {
  for (const [name, list, side] of [
    ['fullest', sweepReference.sweepMax, 'high'],
    ['emptiest', sweepReference.sweepMin, 'low'],
  ] as const) {
    it(`${name} shard of 600 and 1500 weighted shards matches exact convolution (python-flint, make-sweep-reference.py, ${list.length} cases)`, () => {
      expect(list.length).toBeGreaterThan(0);
      const failures: string[] = [];
      for (const c of list) {
        const placement = makePlacement(c.requests, c.weights.length, c.weights);
        const relative = c.relative[0] / c.relative[1];
        const sweep = shareSweep(placement);
        expect(sweep).not.toBeNull();
        // The engine answers from the sweep, and the sweep answers this question.
        const swept = sweptShardTail(side, sweep!, relative);
        expect(swept).not.toBeNull();
        const tail =
          side === 'high' ? fullestTail(placement, relative) : emptiestTail(placement, relative);
        expect(tail.logProbability).toBe(swept!.logProbability);
        const p = Math.exp(tail.logProbability);
        if (!(relativeError(p, c.p) <= TOLERANCE))
          failures.push(`m=${c.weights.length} N=${c.requests} t=${relative}: ${p} vs ${c.p}`);
      }
      expect(failures).toEqual([]);
    });
  }

  it('agrees with the grouped engine (one tail per distinct share) across regimes, both sides (consistency of two methods of ours)', () => {
    const failures: string[] = [];
    for (const [m, n, tokens] of [
      [600, 1e4, 16],
      [600, 1e6, 16],
      [1000, 5e3, 16],
      [2000, 2e4, 16],
      [2000, 1e7, 16],
      [3000, 3e5, 16],
      [5000, 1e9, 16],
      // Wide spreads: 4 tokens (CV 1/2) and 1 token per shard (exponential shares).
      [2000, 1e5, 4],
      [2000, 1e8, 4],
      [2000, 2e4, 1],
      [2000, 1e6, 1],
      [3000, 1e9, 1],
    ]) {
      const weights = ringWeights(m, m + n, tokens);
      const sweep = shareSweep(makePlacement(n, m, weights))!;
      const fair = n / m;
      for (const side of ['high', 'low'] as const) {
        for (const z of [0.5, 2, 3, 4, 5, 6, 8]) {
          const relative =
            side === 'high' ? 1 + z / Math.sqrt(fair) : Math.max(0, 1 - z / Math.sqrt(fair));
          const swept = sweptShardTail(side, sweep, relative);
          if (swept === null) {
            failures.push(`m=${m} N=${n} tokens=${tokens} ${side} z=${z}: sweep refused`);
            continue;
          }
          const grouped = groupedTail(n, weights, relative, side);
          const difference = Math.abs(Math.expm1(swept.logProbability - grouped.logProbability));
          if (!(difference <= 1e-6)) failures.push(`m=${m} N=${n} ${side} z=${z}: ${difference}`);
        }
      }
    }
    expect(failures).toEqual([]);
  });

  it('a sweep moved to a nearby load on its kept table equals a fresh sweep (cells, and direct nodes at small counts)', () => {
    for (const [m, n, tokens] of [
      [5000, 1e9, 16],
      [20000, 1e8, 16],
      [5000, 1e5, 16],
      [3000, 3e5, 1],
    ]) {
      const weights = ringWeights(m, 3, tokens);
      const kept = shareSweep(makePlacement(n, m, weights))!;
      for (const side of ['high', 'low'] as const) {
        const z = Math.min(5.5, 0.8 * Math.sqrt(n / m));
        const base = side === 'high' ? 1 + z / Math.sqrt(n / m) : 1 - z / Math.sqrt(n / m);
        for (const step of [0, 3e-6, -1e-5, 2e-5, 7e-6]) {
          const relative = base * (1 + step);
          const moved = sweepTails(side, kept, relative)!;
          const fresh = sweepTails(
            side,
            shareSweep(makePlacement(n, m, weights.slice()))!,
            relative,
          )!;
          expect(Math.abs(moved.logSum - fresh.logSum)).toBeLessThan(1e-10);
          expect(Math.abs(moved.logSumSquares - fresh.logSumSquares)).toBeLessThan(1e-10);
        }
      }
    }
  });

  it('weighted chance ceiling and floor invert the tail they come from (definition of a quantile, located to 1e-5)', () => {
    for (const [m, n, tokens] of [
      [600, 6e4, 16],
      [2000, 1e7, 16],
      // Exponential shares: the tail is nearly flat over a wide range of loads there.
      [2000, 1e7, 1],
      [3000, 1e5, 4],
    ]) {
      const placement = makePlacement(n, m, ringWeights(m, 21, tokens));
      // The ceiling q is the smallest load with P(max r > q) <= alpha (as for equal shares,
      // where P(max >= q + 1) <= alpha): "just above q" is past the 1e-9 rounding of loads
      // to counts.
      const ceiling = fullestQuantile(placement, 0.999);
      expect(
        Math.exp(fullestTail(placement, ceiling * (1 + 1e-8)).logProbability),
      ).toBeLessThanOrEqual(1e-3);
      expect(Math.exp(fullestTail(placement, ceiling * (1 - 1e-5)).logProbability)).toBeGreaterThan(
        1e-3,
      );
      // The floor is the smallest load with P(min r <= u) >= alpha; 0 when an empty shard
      // alone is that likely.
      const floor = emptiestQuantile(placement, 0.001);
      expect(Math.exp(emptiestTail(placement, floor).logProbability)).toBeGreaterThanOrEqual(1e-3);
      if (floor > 0)
        expect(Math.exp(emptiestTail(placement, floor * (1 - 1e-5)).logProbability)).toBeLessThan(
          1e-3,
        );
    }
  });
});
