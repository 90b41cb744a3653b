import { describe, expect, it } from 'vitest';
import {
  findingLabels,
  longestShardLabel,
  rejectionReasonLabels,
  shardLabel,
} from '../../src/exporter/metric-labels.js';
import { rejectionReasons } from '../../src/window/count-record.js';

describe('label values', () => {
  it('name every finding and every rejection reason without spaces, each once', () => {
    expect(Object.keys(findingLabels)).toEqual([
      'hotspot',
      'cold',
      'uneven',
      'chance',
      'too little traffic',
    ]);
    expect(Object.keys(rejectionReasonLabels).sort()).toEqual([...rejectionReasons].sort());
    for (const values of [Object.values(findingLabels), Object.values(rejectionReasonLabels)]) {
      // Lower case, digits and `_`: "invalid UTF-8" is the one reason with a digit (invalid_utf_8).
      for (const value of values) expect(value).toMatch(/^[a-z][a-z0-9_]*$/);
      expect(new Set(values).size).toBe(values.length);
    }
  });
});

describe('shardLabel', () => {
  it('keeps ordinary shard ids as they are', () => {
    for (const id of ['seat-17', '0', 'orders.p3', 'eu-west:redis/7', 'ring@12', 'a_b']) {
      expect(shardLabel(id)).toBe(id);
    }
  });

  it('rewrites untrusted text and marks it with a hash of the original', () => {
    const label = shardLabel('evil"} 1\nshardwise_x 2');
    expect(label).toMatch(/^evil___1_shardwise_x_2~[0-9a-f]{8}$/);
    // Same input, same label; a different id that sanitizes alike gets another hash.
    expect(shardLabel('evil"} 1\nshardwise_x 2')).toBe(label);
    expect(shardLabel('evil"} 1\rshardwise_x 2')).not.toBe(label);
    expect(shardLabel('é')).toMatch(/^_~[0-9a-f]{8}$/);
    expect(shardLabel('')).toMatch(/^~[0-9a-f]{8}$/);
  });

  it('bounds the length, and long ids that share a prefix stay apart', () => {
    const long = 'x'.repeat(10_000);
    expect(shardLabel(long)).toHaveLength(longestShardLabel);
    expect(shardLabel(long + 'a')).not.toBe(shardLabel(long + 'b'));
    expect(shardLabel('y'.repeat(longestShardLabel))).toBe('y'.repeat(longestShardLabel));
    expect(shardLabel('y'.repeat(longestShardLabel + 1))).toHaveLength(longestShardLabel);
  });

  it('gives FNV-1a of the id as the hash', () => {
    // The empty string hashes to the 32-bit FNV offset basis 0x811c9dc5 (from memory; the
    // FNV reference by Fowler, Noll and Vo lists it), and needs the suffix: it is no id.
    expect(shardLabel('')).toBe('~811c9dc5');
  });
});
