import { describe, expect, it } from 'vitest';
import { KeyedWindows } from '../../src/keys/keyed-windows.js';
import { defaultKeySketchSettings, shardKeyMemoryBound } from '../../src/keys/window-key-stats.js';
import { keptKey, longestKey } from '../../src/keys/key-text.js';

describe('KeyedWindows', () => {
  it('sliding windows: a request counts in every covering window; a closed window takes no more', () => {
    const windows = new KeyedWindows(10_000, 5_000, defaultKeySketchSettings);
    windows.add(12_000, 0, 'a', 1); // windows starting at 5 s and 10 s
    windows.add(7_000, 1, 'b', 2); // windows starting at 0 s and 5 s
    expect(windows.close(0)?.requests).toBe(2);
    windows.add(3_000, 1, 'late', 1); // only window 0 covers 3 s, and it is closed
    const second = windows.close(5_000);
    expect(second?.requests).toBe(3);
    expect(second?.shards[0]?.distinct.count).toBe(1);
    expect(second?.shards[1]?.heavy.top()).toEqual([{ key: 'b', count: 2, overestimate: 0 }]);
    expect(windows.close(10_000)?.requests).toBe(1);
    expect(windows.close(15_000)).toBeNull();
    expect(windows.openWindows).toBe(0);
  });

  it('states its memory bound per shard (16 counters x 320 B + 4096 registers + 200 B)', () => {
    expect(shardKeyMemoryBound(defaultKeySketchSettings)).toBe(16 * 320 + 4096 + 200);
  });
});

describe('keptKey', () => {
  it('keeps short keys, cuts long ones to 128 code units with ~ and 8 hex digits, never inside a surrogate pair', () => {
    expect(keptKey('perf-1', 1)).toBe('perf-1');
    const long = keptKey('k'.repeat(1000), 0xdeadbeef);
    expect(long).toHaveLength(longestKey);
    expect(long.endsWith('~deadbeef')).toBe(true);
    const emoji = keptKey('a'.repeat(118) + '😀'.repeat(10), 1);
    expect(emoji.length).toBeLessThanOrEqual(longestKey);
    const before = emoji.slice(0, emoji.indexOf('~'));
    // A lone high surrogate would end the cut part; a well-formed string re-encodes unchanged.
    expect(new TextDecoder().decode(new TextEncoder().encode(before))).toBe(before);
  });
});
