import { describe, expect, it } from 'vitest';
import { boxLogProbability } from '../../src/chance/box-probability.js';

describe('boxLogProbability', () => {
  it('documented example: 23 people on 365 days all apart, 0.4927027656760144', () => {
    // The birthday problem: 1 - 0.5072972343239857 (published; any probability handbook).
    const box = boxLogProbability(23, [{ share: 1 / 365, count: 365, lower: 0, upper: 1 }]);
    expect(Math.abs(Math.exp(box.logProbability) / 0.4927027656760144 - 1)).toBeLessThan(1e-12);
  });

  it('a box that cannot hold N is impossible, and one configuration is its multinomial probability', () => {
    // Worked by hand: 4 requests on 2 equal shards with both capped at 1 cannot happen; with
    // both floored and capped at 2 only (2, 2) remains, 4!/(2! 2!) / 2^4 = 6/16.
    expect(
      boxLogProbability(4, [{ share: 0.5, count: 2, lower: 0, upper: 1 }]).logProbability,
    ).toBe(-Infinity);
    const pinned = boxLogProbability(4, [{ share: 0.5, count: 2, lower: 2, upper: 2 }]);
    expect(Math.exp(pinned.logProbability)).toBeCloseTo(6 / 16, 14);
  });

  it('at 64 shards the exact value (by characteristic-function inversion) equals the Edgeworth one to its stated error', () => {
    // P(all 64 shards <= 1100 | N = 64 000): two methods inside, no outside reference here;
    // the value itself is checked against python-flint in shard-extremes.test.ts.
    const groups = [{ share: 1 / 64, count: 64, lower: 0, upper: 1100 }];
    const exact = boxLogProbability(64_000, groups);
    expect(exact.method).toBe('exact');
    const quick = boxLogProbability(64_000, groups, { tolerance: 1 });
    expect(Math.abs(Math.exp(exact.logProbability - quick.logProbability) - 1)).toBeLessThanOrEqual(
      Math.max(quick.relativeError, 1e-12),
    );
  });
});
