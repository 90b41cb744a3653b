import { describe, expect, it } from 'vitest';
import { anyShardTail } from '../../src/chance/extreme-load.js';

describe('anyShardTail', () => {
  it('documented example: some day holds 2 of 23 people, 0.5072972343239857', () => {
    // The birthday problem (published; any probability handbook).
    const tail = anyShardTail('high', 23, [{ share: 1 / 365, count: 365, threshold: 2 }]);
    expect(Math.abs(Math.exp(tail.logProbability) / 0.5072972343239857 - 1)).toBeLessThan(1e-12);
  });

  it('three people sharing a day takes 88 people for an even chance (OEIS A014088)', () => {
    const p = (n: number) =>
      Math.exp(
        anyShardTail('high', n, [{ share: 1 / 365, count: 365, threshold: 3 }]).logProbability,
      );
    expect(p(88)).toBeGreaterThan(0.5);
    expect(p(87)).toBeLessThan(0.5);
  });

  it('a shard with no share is always at or below any floor at or above 0', () => {
    const tail = anyShardTail('low', 10, [
      { share: 0, count: 1, threshold: 0 },
      { share: 1, count: 1, threshold: 0 },
    ]);
    expect(tail.method).toBe('certain');
  });

  it('just past certainty on 10 000 unequal shares the tail is 1, not the largest single tail', () => {
    // Thresholds c_i = ceil(t N p_i) at the least t where sum (c_i - 1) exceeds N by 1 and by
    // 100: some shard almost surely reaches its threshold. P(no shard does) is at most
    // prod_i P(X_i <= c_i - 1) (multinomial counts are negatively associated: Joag-Dev and
    // Proschan 1983, Ann. Statist. 11), whose log is -6416.19 and -6408.82 by
    // scipy.stats.binom.logcdf (scipy 1.17.1, computed offline); the largest single tail is
    // exp(-0.694) = 0.4996. Measured on main before the fix: the tail was reported as that
    // single tail, 0.4996 (method lower-bound, error 1.0), and a quantile search that met
    // such a point took the fullest shard's 1e-15 quantile at 1.005 instead of about 1.3.
    const m = 10_000;
    const n = 1_000_000;
    const weights = Array.from({ length: m }, (_, i) => 1 + ((i * 0.6180339887498949) % 1));
    const sum = weights.reduce((a, b) => a + b, 0);
    const expected = weights.map((w) => (n * w) / sum);
    const slack = (t: number) => expected.reduce((s, e) => s + Math.ceil(t * e) - 1, 0) - n;
    for (const target of [1, 100]) {
      let lo = 1;
      let hi = 2;
      for (let i = 0; i < 60; i++) {
        const mid = (lo + hi) / 2;
        if (slack(mid) >= target) hi = mid;
        else lo = mid;
      }
      expect(slack(hi)).toBe(target);
      const groups = weights.map((w, i) => ({
        share: w / sum,
        count: 1,
        threshold: Math.ceil(hi * expected[i]),
      }));
      const tail = anyShardTail('high', n, groups);
      expect(tail.logProbability).toBeGreaterThan(-1e-12);
      expect(tail.logProbability).toBeLessThanOrEqual(0);
      expect(tail.relativeError).toBeLessThan(1e-3);
    }
  });
});
