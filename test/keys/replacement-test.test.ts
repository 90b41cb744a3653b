import { describe, expect, it } from 'vitest';
import { replacementTest } from '../../src/keys/replacement-test.js';

// Exact references computed in the test itself from first principles: for two heavy keys
// on two equal shards, P(both on one shard) = 1/2; for light keys alone, P(max >= k) for
// Multinomial(L, 1/m) by the sum over count vectors with each count at most k - 1 (the
// exact small-case reference docs/model.md names), done as a product-of-shards recurrence.

function logFactorial(n: number): number {
  let sum = 0;
  for (let i = 2; i <= n; i++) sum += Math.log(i);
  return sum;
}

/** P(max count >= k) for Multinomial(total, equal shares over m), exactly. */
function multinomialMaxAtLeast(total: number, m: number, k: number): number {
  // ways[n] = sum over the first shards' counts (each < k) summing to n of prod 1/x_i!
  let ways = new Float64Array(total + 1);
  ways[0] = 1;
  for (let shard = 0; shard < m; shard++) {
    const next = new Float64Array(total + 1);
    for (let n = 0; n <= total; n++) {
      if (ways[n] === 0) continue;
      for (let x = 0; x < k && n + x <= total; x++)
        next[n + x] += ways[n] / Math.exp(logFactorial(x));
    }
    ways = next;
  }
  const atMost = ways[total] * Math.exp(logFactorial(total) - total * Math.log(m));
  return 1 - atMost;
}

describe('replacementTest', () => {
  it('two equal heavy keys on two shards share one with probability 1/2: inside the 95% Wilson interval', () => {
    const result = replacementTest({
      heavy: Float64Array.of(5, 5),
      lightRequests: 0,
      lightKeys: 0,
      shares: null,
      shardCount: 2,
      observed: 2,
      maxSimulations: 2000,
      maxWork: 1e7,
      seed: 11,
    });
    expect(result.simulations).toBe(2000);
    expect(result.low).toBeLessThan(0.5);
    expect(result.high).toBeGreaterThan(0.5);
    expect(result.p).toBeCloseTo((result.exceeded + 1) / 2001, 12);
  });

  it('light keys alone: the fullest-shard tail of Multinomial(200, 1/4) from the exact recurrence lies in the interval', () => {
    const total = 200;
    const m = 4;
    const k = 62;
    const exact = multinomialMaxAtLeast(total, m, k);
    expect(exact).toBeGreaterThan(0.05);
    expect(exact).toBeLessThan(0.95);
    const result = replacementTest({
      heavy: new Float64Array(0),
      lightRequests: total,
      lightKeys: total,
      shares: null,
      shardCount: m,
      observed: k / (total / m),
      maxSimulations: 4000,
      maxWork: 1e8,
      seed: 3,
    });
    expect(result.low).toBeLessThan(exact);
    expect(result.high).toBeGreaterThan(exact);
  });

  it('the work cap cuts the simulations, and a seed gives the same answer', () => {
    const input = {
      heavy: new Float64Array(1000).fill(1),
      lightRequests: 0,
      lightKeys: 0,
      shares: null,
      shardCount: 10,
      observed: 1.3,
      maxSimulations: 1000,
      maxWork: 50_000,
      seed: 5,
    };
    const first = replacementTest(input);
    expect(first.simulations).toBeLessThan(1000);
    expect(first.simulations).toBe(Math.floor(50_000 / (1000 + 2 * 10 + 1)));
    expect(replacementTest(input)).toEqual(first);
  });
});
