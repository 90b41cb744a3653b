/**
 * Two 32-bit hashes of a key in one pass over its UTF-16 code units: FNV-1a (Fowler, Noll
 * and Vo) and the block step of MurmurHash3 x86_32 (Austin Appleby, public domain), each
 * finished with MurmurHash3's fmix32 so that every output bit depends on every input bit.
 * The first drives the HyperLogLog registers (a 32-bit hash, as in Flajolet et al. 2007);
 * both together give the 53-bit identity that the exact phase of a distinct count keeps.
 * Not for anything secret: a producer who knows the functions can make keys collide.
 */
export interface KeyHashes {
  /** FNV-1a + fmix32, unsigned 32-bit. */
  first: number;
  /** MurmurHash3 block step + fmix32, unsigned 32-bit. */
  second: number;
}

/**
 * Hashes `key` into `out` (reused, so the hot path allocates nothing). O(key length).
 *
 * @example hashKey('perf-1', out); combinedHash(out) // a whole number below 2^53
 */
export function hashKey(key: string, out: KeyHashes): KeyHashes {
  let first = 0x811c9dc5 | 0;
  let second = 0x9747b28c | 0;
  for (let at = 0; at < key.length; at++) {
    const unit = key.charCodeAt(at);
    first = Math.imul(first ^ unit, 0x01000193);
    let block = Math.imul(unit, 0xcc9e2d51);
    block = (block << 15) | (block >>> 17);
    block = Math.imul(block, 0x1b873593);
    second ^= block;
    second = (second << 13) | (second >>> 19);
    second = (Math.imul(second, 5) + 0xe6546b64) | 0;
  }
  out.first = finish(first ^ key.length);
  out.second = finish(second ^ key.length);
  return out;
}

/** The two hashes as one whole number in [0, 2^53): the first's 32 bits above 21 of the second's. */
export function combinedHash(hashes: KeyHashes): number {
  return hashes.first * 2_097_152 + (hashes.second >>> 11);
}

/** The first hash back from a combined one. */
export function firstOfCombined(combined: number): number {
  return Math.floor(combined / 2_097_152);
}

/** MurmurHash3's 32-bit finaliser (fmix32). */
function finish(hash: number): number {
  let h = hash;
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}
