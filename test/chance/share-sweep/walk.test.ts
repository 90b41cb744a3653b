import { describe, expect, it } from 'vitest';
import type {
  CutAccumulator,
  TailAccumulator,
} from '../../../src/chance/share-sweep/accumulators.js';
import { PRUNE_EXACT, shareSweep } from '../../../src/chance/share-sweep/sorted-shares.js';
import { walk } from '../../../src/chance/share-sweep/walk.js';
import { logBinomialAtLeast } from '../../../src/chance/tails.js';
import { referenceSweep, relativeGap, sweepShares, sweepTotal } from './sweep-shares.js';

const tails = (): TailAccumulator => ({
  reference: 0,
  sum: 0,
  squares: 0,
  first: -1,
  firstTail: -1,
  firstK: 0,
  second: -1,
  secondTail: -1,
  secondK: 0,
});

// 600 shares, weights 1, 2, 3 (two hundred each): 1/1200, 2/1200, 3/1200; N = 200000.
function threeShares() {
  const weights = Array.from({ length: 600 }, (_, i) => 1 + (i % 3));
  const sweep = shareSweep({
    total: sweepTotal,
    shardCount: 600,
    shares: Float64Array.from(weights, (weight) => weight / 1200),
  });
  if (sweep === null) throw new Error('a sweep');
  return sweep;
}

describe('walk', () => {
  it('side low at load 0: tails in closed form, and the walk stops e^-40 below the largest', () => {
    // scipy 1.17.1: binom.logcdf(0, 200000, 1/1200) = -166.7361497154868, and at 2/1200
    // -333.611420139404, more than 40 below: only the 200 smallest shares are walked.
    const acc = tails();
    const count = walk(
      { side: 'low', law: { kind: 'binomial' }, sweep: threeShares(), relative: 0 },
      PRUNE_EXACT,
      acc,
      null,
    );
    expect(count).toBe(200);
    expect(acc.reference).toBeCloseTo(-166.7361497154868, 11);
    expect(acc.sum).toBe(200);
    expect([acc.first, acc.second, acc.firstK]).toEqual([0, 1, 0]);
  });

  it('Poisson cuts at load 0: e^-mean each, with elasticity -mean', () => {
    // scipy: poisson.logcdf(0, 200000 / 1200) = -166.66666666666666.
    const cuts: CutAccumulator = {
      rate: sweepTotal,
      edgeShift: 1,
      logMassSum: 0,
      means: 0,
      u: new Float64Array(6),
      empty: false,
      uSpread: 0,
      tailSum: 0,
    };
    const count = walk(
      {
        side: 'low',
        law: { kind: 'poisson', rate: sweepTotal },
        sweep: threeShares(),
        relative: 0,
      },
      PRUNE_EXACT,
      null,
      cuts,
    );
    expect(count).toBe(200);
    expect(relativeGap(cuts.tailSum, 200 * Math.exp(-166.66666666666666))).toBeLessThanOrEqual(
      1e-12,
    );
    expect(cuts.means).toBeCloseTo(200 * (200_000 / 1200), 8);
  });

  it('binomial side high: the walked tails sum to the per-shard exact tails', () => {
    // Against tails.ts's exact binomial tails per shard (checked against scipy in
    // tails.test.ts), to the method's 1e-8; the shards left out each lie e^-40 below the
    // largest tail.
    const sweep = referenceSweep();
    const acc = tails();
    const count = walk(
      { side: 'high', law: { kind: 'binomial' }, sweep, relative: 1.25 },
      PRUNE_EXACT,
      acc,
      null,
    );
    expect(count).not.toBeNull();
    const shares = Float64Array.from(sweepShares()).sort();
    let exact = 0;
    let largest = -Infinity;
    const logs: number[] = [];
    for (const share of shares) {
      const x = 1.25 * (sweepTotal * share);
      const logTail = logBinomialAtLeast(Math.ceil(x - 1e-9 * Math.max(1, x)), sweepTotal, share);
      logs.push(logTail);
      largest = Math.max(largest, logTail);
    }
    for (const logTail of logs.slice(0, count as number))
      exact += Math.exp(logTail - acc.reference);
    expect(relativeGap(acc.sum, exact)).toBeLessThanOrEqual(1e-8);
    for (const logTail of logs.slice(count as number)) {
      expect(logTail).toBeLessThan(largest - PRUNE_EXACT);
    }
  });
});
