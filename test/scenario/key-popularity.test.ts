import { describe, expect, it } from 'vitest';
import {
  drawIndex,
  placeKeys,
  shardOfKey,
  zipfProbabilities,
} from '../../src/scenario/key-popularity.js';

describe('zipfProbabilities', () => {
  it('falls off as rank^-s and sums to 1', () => {
    // Zipf's law: p(1)/p(2) = 2^s and p(1)/p(10) = 10^s.
    const probabilities = zipfProbabilities(1000, 0.9);
    expect(probabilities[0] / probabilities[1]).toBeCloseTo(2 ** 0.9, 12);
    expect(probabilities[0] / probabilities[9]).toBeCloseTo(10 ** 0.9, 12);
    expect(probabilities.reduce((sum, value) => sum + value, 0)).toBeCloseTo(1, 12);
    // s = 0 is uniform.
    expect([...zipfProbabilities(4, 0)]).toEqual([0.25, 0.25, 0.25, 0.25]);
  });
});

describe('shardOfKey', () => {
  it('is FNV-1a modulo the shard count', () => {
    // FNV-1a("a") = 0xe40c292c (published test vector, from memory); 0xe40c292c mod 64 = 0x2c = 44.
    expect(shardOfKey('a', 64)).toBe(44);
    expect(shardOfKey('a', 0x1_0000_0000 - 1)).toBe(0xe40c292c % (0x1_0000_0000 - 1));
  });
});

describe('placeKeys', () => {
  it('gives each shard the summed popularity of its keys', () => {
    const probabilities = zipfProbabilities(500, 1);
    const placement = placeKeys('perf-', probabilities, 8);
    let expected = 0;
    probabilities.forEach((probability, index) => {
      if (shardOfKey(`perf-${index + 1}`, 8) === 3) expected += probability;
    });
    expect(placement.shares[3]).toBeCloseTo(expected, 14);
    expect(placement.shares.reduce((sum, share) => sum + share, 0)).toBeCloseTo(1, 12);
    for (const shard of placement.byShard) {
      if (shard.keys.length > 0) expect(shard.cumulative[shard.keys.length - 1]).toBe(1);
      shard.keys.forEach((key) =>
        expect(shardOfKey(key, 8)).toBe(placement.byShard.indexOf(shard)),
      );
    }
  });
});

describe('drawIndex', () => {
  it('returns the first index whose cumulative probability exceeds u', () => {
    const cumulative = new Float64Array([0.2, 0.5, 1]);
    expect([0, 0.19, 0.2, 0.49, 0.5, 0.99].map((u) => drawIndex(cumulative, u))).toEqual([
      0, 0, 1, 1, 2, 2,
    ]);
  });
});
