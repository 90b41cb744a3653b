import { describe, expect, it } from 'vitest';
import { keptKey, longestKey } from '../../src/keys/key-text.js';

describe('keptKey', () => {
  it('the doc examples: a short key as it is; a long one ends with ~ and the hash in 8 hex digits', () => {
    expect(keptKey('perf-1', 0)).toBe('perf-1');
    expect(keptKey('x'.repeat(500), 0xdeadbeef)).toBe(`${'x'.repeat(119)}~deadbeef`);
  });

  it('a key of exactly the longest length is kept whole; one unit more is cut to that length', () => {
    const edge = 'k'.repeat(longestKey);
    expect(longestKey).toBe(128);
    expect(keptKey(edge, 1)).toBe(edge);
    const cut = keptKey(`${edge}k`, 1);
    expect(cut).toBe(`${'k'.repeat(119)}~00000001`);
    expect(cut).toHaveLength(128);
  });

  it('a negative hash (signed 32-bit) prints as its unsigned hex', () => {
    expect(keptKey('y'.repeat(200), -1)).toBe(`${'y'.repeat(119)}~ffffffff`);
  });

  it('never cuts inside a surrogate pair', () => {
    // UTF-16 (Unicode standard): U+1F600 is the pair D83D DE00. With 118 units before it the
    // pair would straddle the cut at 119, so the cut moves one unit earlier.
    const key = `${'z'.repeat(118)}\u{1F600}${'z'.repeat(50)}`;
    const cut = keptKey(key, 0xabc);
    expect(cut).toBe(`${'z'.repeat(118)}~00000abc`);
    expect(cut).toHaveLength(127);
    // One unit earlier the pair fits whole before the cut.
    const fits = keptKey(`${'z'.repeat(117)}\u{1F600}${'z'.repeat(50)}`, 0xabc);
    expect(fits).toBe(`${'z'.repeat(117)}\u{1F600}~00000abc`);
  });
});
