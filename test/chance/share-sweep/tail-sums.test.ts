import { describe, expect, it } from 'vitest';
import { sweepTails } from '../../../src/chance/share-sweep/tail-sums.js';
import { referenceSweep } from './sweep-shares.js';

// scipy 1.17.1 via test/chance/reference/make-sweep-sums-reference.py: per-shard binomial
// tails (binom.logsf / logcdf) at each shard's threshold, summed with logsumexp. Held to
// 1e-8 in log, the check of the method's loosest step (cells against their interpolant,
// sorted-shares.ts).
const tolerance = 1e-8;

describe('sweepTails', () => {
  it('side high at 1.25x: the first Bonferroni sum, the sum of squares and the two largest tails', () => {
    const sums = sweepTails('high', referenceSweep(), 1.25);
    expect(sums).not.toBeNull();
    const { logSum, logSumSquares, top, certain } = sums as NonNullable<typeof sums>;
    expect(Math.abs(logSum - -2.9265594635630503)).toBeLessThanOrEqual(tolerance);
    expect(Math.abs(logSumSquares - -10.589185713886922)).toBeLessThanOrEqual(tolerance);
    // The smallest share (weight 1, six shards alike) has the largest tail: threshold 210.
    expect(top.map((shard) => [shard.share, shard.threshold])).toEqual([
      [0.0008375209380234509, 210],
      [0.0008375209380234509, 210],
    ]);
    for (const shard of top) {
      expect(Math.abs(shard.logTail - -7.0611757892542)).toBeLessThanOrEqual(tolerance);
    }
    expect(certain).toBe(false);
  });

  it('side low at 0.8x', () => {
    const sums = sweepTails('low', referenceSweep(), 0.8);
    expect(sums).not.toBeNull();
    const { logSum, logSumSquares, top } = sums as NonNullable<typeof sums>;
    expect(Math.abs(logSum - -1.190043640800913)).toBeLessThanOrEqual(tolerance);
    expect(Math.abs(logSumSquares - -7.380467687050116)).toBeLessThanOrEqual(tolerance);
    expect(top.map((shard) => [shard.share, shard.threshold])).toEqual([
      [0.0008375209380234509, 134],
      [0.0008375209380234509, 134],
    ]);
    expect(Math.abs(top[0].logTail - -5.454156298756218)).toBeLessThanOrEqual(tolerance);
  });

  it('a second sweep at the same load on the kept table gives the same sums', () => {
    const sweep = referenceSweep();
    const first = sweepTails('high', sweep, 1.25);
    const again = sweepTails('high', sweep, 1.25);
    expect(again).toEqual(first);
  });
});
