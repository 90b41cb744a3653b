import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { hashIdBytes, ShardIdCache } from '../../src/ingest/shard-id-cache.js';

const encoder = new TextEncoder();

function idOf(cache: ShardIdCache, id: string): string {
  const bytes = encoder.encode(id);
  return cache.idFor(bytes, 0, bytes.length, hashIdBytes(bytes, 0, bytes.length));
}

describe('ShardIdCache', () => {
  it('spells every id right, even when ids share slots (property)', () => {
    // A two-slot table forces collisions; the answer must still be the id itself.
    const cache = new ShardIdCache(2);
    fc.assert(
      fc.property(
        fc.array(
          fc.string({
            unit: fc.integer({ min: 0x20, max: 0x7e }).map((code) => String.fromCharCode(code)),
            maxLength: 20,
          }),
          { minLength: 1, maxLength: 50 },
        ),
        (ids) => {
          for (const id of ids) expect(idOf(cache, id)).toBe(id);
        },
      ),
      { numRuns: 500, seed: 7 },
    );
  });

  it('tells apart ids with equal length and equal hash slot', () => {
    const cache = new ShardIdCache(1);
    expect(idOf(cache, 'ab')).toBe('ab');
    expect(idOf(cache, 'ba')).toBe('ba');
    expect(idOf(cache, 'ab')).toBe('ab');
  });

  it('uses 32-bit FNV-1a', () => {
    // FNV-1a test vectors published with the algorithm (Fowler, Noll, Vo), from memory: "" -> 0x811c9dc5, "a" -> 0xe40c292c, "foobar" -> 0xbf9cf968.
    expect(hashIdBytes(encoder.encode(''), 0, 0) >>> 0).toBe(0x811c9dc5);
    expect(hashIdBytes(encoder.encode('a'), 0, 1) >>> 0).toBe(0xe40c292c);
    expect(hashIdBytes(encoder.encode('foobar'), 0, 6) >>> 0).toBe(0xbf9cf968);
  });
});
