import { describe, expect, it } from 'vitest';
import { keyPlacementTest } from '../../src/keys/key-placement-test.js';

describe('keyPlacementTest', () => {
  it('23 keys on 365 shards with one pair: the birthday problem, P = 0.5072972 (published, any probability handbook)', () => {
    const distinct = new Float64Array(365);
    for (let shard = 0; shard < 21; shard++) distinct[shard] = 1;
    distinct[21] = 2;
    const result = keyPlacementTest(
      { distinct, exact: new Array<boolean>(365).fill(true), standardError: 0.01625 },
      null,
    );
    expect(result.keys).toBe(23);
    expect(result.fullest.index).toBe(21);
    // Tolerance: docs/model.md's accuracy bar, relative 1e-3.
    expect(result.fullest.p).toBeCloseTo(0.5072972343239857, 3);
  });

  it('an estimated count must stand out beyond 3 standard errors of the sketch before it is evidence', () => {
    const distinct = new Float64Array(64).fill(1000);
    distinct[5] = 1150;
    const exact = new Array<boolean>(64).fill(true);
    const asExact = keyPlacementTest({ distinct, exact, standardError: 0.01625 }, null);
    exact[5] = false;
    const asEstimate = keyPlacementTest({ distinct, exact, standardError: 0.01625 }, null);
    expect(asExact.fullest.index).toBe(5);
    expect(asEstimate.fullest.p).toBeGreaterThan(asExact.fullest.p);
    expect(asEstimate.spreadP).toBeNull();
    expect(asExact.spreadP).not.toBeNull();
  });
});
