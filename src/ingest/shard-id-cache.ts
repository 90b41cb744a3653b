/**
 * Turns the bytes of an ASCII shard id into a string, reusing the string made
 * last time the same bytes were seen. A stream of count reports repeats a
 * few thousand ids millions of times; making a string per record is most of
 * the decoding cost otherwise. The returned strings are fresh copies, never
 * views into a read buffer, so keeping one does not pin the buffer.
 *
 * A direct-mapped table: a slot holds the last id that hashed to it, so two
 * hot ids sharing a slot only cost a string each time, never a wrong answer.
 */
export class ShardIdCache {
  private readonly ids: (string | undefined)[];
  private readonly hashes: Int32Array;
  private readonly mask: number;

  /** @param slots table size, rounded up to a power of two (default 4096) */
  constructor(slots = 4096) {
    const size = 2 ** Math.ceil(Math.log2(Math.max(2, slots)));
    this.ids = new Array<string | undefined>(size).fill(undefined);
    this.hashes = new Int32Array(size);
    this.mask = size - 1;
  }

  /**
   * The id spelled by `bytes[start..end)`, all in 0x20..0x7e. `hash` is
   * {@link hashIdBytes} of the same span (the scanner computes it while
   * reading). O(id length).
   */
  idFor(bytes: Uint8Array, start: number, end: number, hash: number): string {
    const slot = hash & this.mask;
    const cached = this.ids[slot];
    if (cached !== undefined && this.hashes[slot] === hash && cached.length === end - start) {
      let same = true;
      for (let offset = 0; offset < cached.length; offset++) {
        if (cached.charCodeAt(offset) !== bytes[start + offset]) {
          same = false;
          break;
        }
      }
      if (same) return cached;
    }
    const id = String.fromCharCode.apply(null, Array.from(bytes.subarray(start, end)));
    this.ids[slot] = id;
    this.hashes[slot] = hash;
    return id;
  }
}

/** FNV-1a offset basis (Fowler, Noll, Vo): the hash of no bytes. */
export const idHashStart = 0x811c9dc5 | 0;

/**
 * One FNV-1a step (32-bit), the hash {@link ShardIdCache} is keyed by:
 * `hash = hashIdByte(hash, byte)` for each byte, from {@link idHashStart}.
 */
export function hashIdByte(hash: number, byte: number): number {
  return Math.imul(hash ^ byte, 0x01000193);
}

/** FNV-1a of `bytes[start..end)`, as the scanner computes it byte by byte. */
export function hashIdBytes(bytes: Uint8Array, start: number, end: number): number {
  let hash = idHashStart;
  for (let at = start; at < end; at++) hash = hashIdByte(hash, bytes[at]);
  return hash;
}
