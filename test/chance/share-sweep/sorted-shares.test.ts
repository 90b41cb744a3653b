import { describe, expect, it } from 'vitest';
import {
  SWEEP_FROM,
  shareSweep,
  thresholdAt,
} from '../../../src/chance/share-sweep/sorted-shares.js';

/** `count` shares, the i-th proportional to 1 + (i mod 3), summing to 1. */
function shares(count: number): Float64Array {
  const weights = Array.from({ length: count }, (_, i) => 1 + (i % 3));
  const total = weights.reduce((sum, weight) => sum + weight, 0);
  return Float64Array.from(weights, (weight) => weight / total);
}

describe('shareSweep', () => {
  it('sorts the shares ascending with their prefix sums', () => {
    const sweep = shareSweep({ total: 1000, shardCount: 600, shares: shares(600) });
    expect(sweep).not.toBeNull();
    const { shares: sorted, prefix, total } = sweep as NonNullable<typeof sweep>;
    expect(total).toBe(1000);
    // 600 shards, weights 1, 2, 3 two hundred each: 1200 in all.
    expect(sorted[0]).toBe(1 / 1200);
    expect(sorted[199]).toBe(1 / 1200);
    expect(sorted[200]).toBe(2 / 1200);
    expect(sorted[599]).toBe(3 / 1200);
    expect(prefix).toHaveLength(601);
    expect(prefix[0]).toBe(0);
    expect(prefix[200]).toBeCloseTo(200 / 1200, 14);
    expect(prefix[600]).toBeCloseTo(1, 13);
  });

  it('is for many weighted shards only: equal, few, a zero share or a share above 1e-2 are not', () => {
    expect(SWEEP_FROM).toBe(500);
    expect(shareSweep({ total: 1000, shardCount: 600, shares: null })).toBeNull();
    expect(shareSweep({ total: 1000, shardCount: 499, shares: shares(499) })).toBeNull();
    expect(shareSweep({ total: 1000, shardCount: 500, shares: shares(500) })).not.toBeNull();
    const withZero = shares(600);
    withZero[0] = 0;
    expect(shareSweep({ total: 1000, shardCount: 600, shares: withZero })).toBeNull();
    const withLarge = shares(600);
    withLarge[7] = 0.0101;
    expect(shareSweep({ total: 1000, shardCount: 600, shares: withLarge })).toBeNull();
  });

  it('kept per shares array: the same total gives the same sweep, a new total its order anew', () => {
    const values = shares(600);
    const first = shareSweep({ total: 1000, shardCount: 600, shares: values });
    expect(shareSweep({ total: 1000, shardCount: 600, shares: values })).toBe(first);
    const other = shareSweep({ total: 5000, shardCount: 600, shares: values });
    expect(other).not.toBe(first);
    expect(other?.total).toBe(5000);
    expect(other?.shares).toBe(first?.shares);
    expect(other?.prefix).toBe(first?.prefix);
  });
});

describe('thresholdAt', () => {
  it('ceiling on side high, floor on side low', () => {
    expect(thresholdAt('high', 3.2)).toBe(4);
    expect(thresholdAt('low', 3.8)).toBe(3);
    expect(thresholdAt('high', 3)).toBe(3);
    expect(thresholdAt('low', 3)).toBe(3);
  });

  it('a position a rounding past a whole count stays on it (placement.ts: 1e-9 max(1, x))', () => {
    expect(thresholdAt('high', 3 + 1e-10)).toBe(3);
    expect(thresholdAt('low', 3 - 1e-10)).toBe(3);
    // Beyond the slack the count moves.
    expect(thresholdAt('high', 3 + 1e-8)).toBe(4);
    expect(thresholdAt('low', 3 - 1e-8)).toBe(2);
    // Above 1e6 counts the slack is 1e-3 + 1e-14 x.
    expect(thresholdAt('high', 2e6 + 5e-4)).toBe(2e6);
    expect(thresholdAt('high', 2e6 + 2e-3)).toBe(2e6 + 1);
  });
});
