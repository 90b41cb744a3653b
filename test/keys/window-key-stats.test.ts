import { describe, expect, it } from 'vitest';
import { combinedHash, hashKey, type KeyHashes } from '../../src/keys/key-hash.js';
import {
  WindowKeyStats,
  defaultKeySketchSettings,
  shardKeyMemoryBound,
} from '../../src/keys/window-key-stats.js';

describe('shardKeyMemoryBound', () => {
  it('the doc example: 16 counters of 320 bytes, 4096 registers, 200 bytes of headers', () => {
    // 16 * (256 + 64) + 4096 + 200, the formula of its doc comment.
    expect(shardKeyMemoryBound(defaultKeySketchSettings)).toBe(9416);
    expect(shardKeyMemoryBound({ counters: 4, registers: 16 })).toBe(4 * 320 + 16 + 200);
  });
});

describe('WindowKeyStats', () => {
  const scratch = (): KeyHashes => ({ first: 0, second: 0 });

  it('allocates a shard on its first keyed request and counts requests per shard and in all', () => {
    // 256 registers count exactly up to 256 / 16 = 16 distinct keys (distinct-keys.ts).
    const stats = new WindowKeyStats({ counters: 4, registers: 256 });
    const hashes = scratch();
    stats.add(2, 'user-1', 5, hashes);
    stats.add(2, 'user-2', 1, hashes);
    stats.add(0, 'user-1', 3, hashes);
    expect(stats.requests).toBe(9);
    expect(stats.shards).toHaveLength(3);
    expect(stats.shards[1]).toBeUndefined();
    expect(stats.shards[2]?.requests).toBe(6);
    expect(stats.shards[2]?.heavy.top()).toEqual([
      { key: 'user-1', count: 5, overestimate: 0 },
      { key: 'user-2', count: 1, overestimate: 0 },
    ]);
    expect(stats.shards[2]?.distinct.count).toBe(2);
    expect(stats.shards[0]?.distinct.count).toBe(1);
    // The hashes of the last key are left in the scratch object.
    expect(combinedHash(hashes)).toBe(combinedHash(hashKey('user-1', scratch())));
  });

  it('a long key is kept cut, marked with its second hash', () => {
    const stats = new WindowKeyStats({ counters: 4, registers: 16 });
    const key = 'q'.repeat(300);
    stats.add(0, key, 1, scratch());
    const second = hashKey(key, scratch()).second;
    expect(stats.shards[0]?.heavy.top()[0].key).toBe(
      `${'q'.repeat(119)}~${second.toString(16).padStart(8, '0')}`,
    );
  });

  it('follows a retirement: statistics move to their new index, a retired shard’s are dropped', () => {
    const stats = new WindowKeyStats({ counters: 4, registers: 16 });
    stats.add(0, 'a', 1, scratch());
    stats.add(1, 'b', 2, scratch());
    stats.add(3, 'c', 3, scratch());
    const third = stats.shards[3];
    // Shard 0 retired, 1 and 3 move down; 2 never saw a key.
    stats.follow(Int32Array.from([-1, 0, 1, 2]));
    expect(stats.shards).toHaveLength(3);
    expect(stats.shards[0]?.requests).toBe(2);
    expect(stats.shards[1]).toBeUndefined();
    expect(stats.shards[2]).toBe(third);
    // The window's total stays: it counts what arrived.
    expect(stats.requests).toBe(6);
  });
});
