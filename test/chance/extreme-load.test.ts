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
});
