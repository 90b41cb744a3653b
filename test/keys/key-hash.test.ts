import { describe, expect, it } from 'vitest';
import { combinedHash, firstOfCombined, hashKey, type KeyHashes } from '../../src/keys/key-hash.js';

// Reference values from test/keys/reference/make-key-hash-reference.py (mmh3 5.3.1, PyPI):
// first = fmix32(FNV-1a 32 of the key ^ its length), second = fmix32(MurmurHash3 x86_32
// state after one block per code unit, seed 0x9747b28c, ^ its length). The FNV-1a part is
// the published hash; its vectors (FNV authors' test vectors, from memory) are asserted in
// the script: '' -> 0x811c9dc5, 'a' -> 0xe40c292c, 'foobar' -> 0xbf9cf968. So are
// MurmurHash3 x86_32's published vectors of no bytes (seed 1 -> 0x514e28b7, seed
// 0xffffffff -> 0x81f16f39, from memory), which pin fmix32.
const reference: [key: string, first: number, second: number, combined: number][] = [
  ['', 0xab3e7c0b, 0xebb6c228, 6025115439298264],
  ['a', 0x2a681819, 0x11caa9f5, 1492050216368469],
  ['foobar', 0xeedc7606, 0x75513b33, 8404180491217447],
  ['perf-1', 0x34d4084e, 0x94c34463, 1858728866519144],
  ['seat-17', 0x316d64f8, 0xabd80f39, 1739069286873857],
  ['é', 0xf52b4640, 0x175788fc, 8626118752135921],
];

const fresh = (): KeyHashes => ({ first: 0, second: 0 });

describe('hashKey', () => {
  it.each(reference)(
    '%j: both hashes and the combined one as the reference computes them',
    (key, first, second, combined) => {
      const out = hashKey(key, fresh());
      expect(out.first).toBe(first);
      expect(out.second).toBe(second);
      expect(combinedHash(out)).toBe(combined);
    },
  );

  it('writes into the object it is given and returns it (the hot path allocates nothing)', () => {
    const out = fresh();
    expect(hashKey('perf-1', out)).toBe(out);
    // Reused for another key, nothing of the first one is left.
    hashKey('a', out);
    expect(out).toEqual({ first: 0x2a681819, second: 0x11caa9f5 });
  });

  it('the doc example: the combined hash of perf-1 is a whole number below 2^53', () => {
    const combined = combinedHash(hashKey('perf-1', fresh()));
    expect(Number.isSafeInteger(combined)).toBe(true);
    expect(combined).toBeLessThan(2 ** 53);
    expect(combined).toBeGreaterThanOrEqual(0);
  });

  it('firstOfCombined gives the first hash back, at both ends of its range', () => {
    for (const [key, first] of reference) {
      expect(firstOfCombined(combinedHash(hashKey(key, fresh())))).toBe(first);
    }
    expect(firstOfCombined(combinedHash({ first: 0xffffffff, second: 0xffffffff }))).toBe(
      0xffffffff,
    );
    expect(combinedHash({ first: 0xffffffff, second: 0xffffffff })).toBe(2 ** 53 - 1);
    expect(combinedHash({ first: 0, second: 0x7ff })).toBe(0);
  });
});
