import { describe, expect, it } from 'vitest';
import { DistinctKeys } from '../../src/keys/distinct-keys.js';
import { combinedHash, hashKey } from '../../src/keys/key-hash.js';

// Source of truth: P. Flajolet, E. Fusy, O. Gandouet and F. Meunier, "HyperLogLog: the
// analysis of a near-optimal cardinality estimation algorithm", AofA 2007: relative
// standard error 1.04 / sqrt(m) for m registers at large cardinalities (Theorem 1 and
// Section 4), with the small-range correction (linear counting) below 2.5 m. Exact counts
// come from a JavaScript Set of the same keys. Keys are seeded strings.

const hashes = { first: 0, second: 0 };

function countDistinct(keys: Iterable<string>, registers: number): DistinctKeys {
  const distinct = new DistinctKeys({ registers });
  for (const key of keys) distinct.add(combinedHash(hashKey(key, hashes)));
  return distinct;
}

function* keyRange(run: number, count: number, repeats = 1): Generator<string> {
  for (let repeat = 0; repeat < repeats; repeat++) {
    for (let at = 0; at < count; at++) yield `run${run}:user-${at}`;
  }
}

describe('DistinctKeys exact phase', () => {
  it('counts exactly, repeats included, up to registers / 16 keys', () => {
    for (const count of [0, 1, 17, 255, 256]) {
      const distinct = countDistinct(keyRange(count, count, 3), 4096);
      expect(distinct.exact).toBe(true);
      expect(distinct.count).toBe(new Set(keyRange(count, count)).size);
    }
  });

  it('switches to the sketch one key past registers / 16', () => {
    const distinct = countDistinct(keyRange(1, 257), 4096);
    expect(distinct.exactUpTo).toBe(256);
    expect(distinct.exact).toBe(false);
    // Linear counting at 257 keys in 4096 registers: error far below the 1.04/sqrt(m) bar.
    expect(Math.abs(distinct.count - 257) / 257).toBeLessThan(3 * distinct.standardError);
  });
});

describe('DistinctKeys sketch against exact counts (Flajolet et al. 2007)', () => {
  for (const [registers, cardinality, runs] of [
    [1024, 100_000, 30],
    [4096, 60_000, 20],
    [256, 20_000, 40],
  ] as const) {
    it(`${registers} registers, ${cardinality} keys, ${runs} seeded key sets: RMS error near 1.04/sqrt(m), no bias`, () => {
      const standardError = 1.04 / Math.sqrt(registers);
      const errors: number[] = [];
      for (let run = 0; run < runs; run++) {
        const distinct = countDistinct(keyRange(run * 7 + registers, cardinality), registers);
        expect(distinct.standardError).toBeCloseTo(standardError, 12);
        errors.push(distinct.count / cardinality - 1);
      }
      const mean = errors.reduce((sum, error) => sum + error, 0) / runs;
      const rms = Math.sqrt(errors.reduce((sum, error) => sum + error * error, 0) / runs);
      // Tolerances: the mean of `runs` errors has standard deviation SE / sqrt(runs), allowed
      // 3.5 of them; the RMS of `runs` near-normal errors has relative standard deviation
      // about 1 / sqrt(2 runs) (13% at 30 runs), allowed [0.6, 1.45] x SE.
      expect(Math.abs(mean)).toBeLessThan((3.5 * standardError) / Math.sqrt(runs));
      expect(rms).toBeGreaterThan(0.6 * standardError);
      expect(rms).toBeLessThan(1.45 * standardError);
      for (const error of errors) expect(Math.abs(error)).toBeLessThan(4.5 * standardError);
    });
  }

  it('refuses a register count that is not a power of two in 16..65536', () => {
    for (const registers of [8, 1000, 131_072]) {
      expect(() => new DistinctKeys({ registers })).toThrow(RangeError);
    }
  });
});
