import { describe, expect, it } from 'vitest';
import { UsageError } from '../../src/errors/usage-error.js';
import { parseShardMap } from '../../src/window/shard-map.js';

function mapError(content: string, fileName: string, maxShards = 100): string {
  try {
    parseShardMap(content, fileName, maxShards);
  } catch (error) {
    expect(error).toBeInstanceOf(UsageError);
    expect((error as UsageError).option).toBe('--shard-map');
    expect((error as UsageError).value).toBe(fileName);
    return (error as UsageError).message;
  }
  throw new Error('expected a UsageError');
}

describe('parseShardMap, CSV', () => {
  it('reads a header and rows, allowing padding, quotes, CRLF, blank lines and a BOM', () => {
    const content = '\ufeffShard, Weight\r\n"s,0", 1.5\r\n\r\ns-1,2e0\r\n';
    expect(parseShardMap(content, 'map.csv', 100)).toEqual({
      ids: ['s,0', 's-1'],
      weights: [1.5, 2],
    });
  });

  it('names the file and the bad entry for every bad weight', () => {
    expect(mapError('shard,weight\ns-0,1\ns-1,0\n', 'caps.csv')).toBe(
      '--shard-map: "caps.csv" line 3 "s-1,0": weight 0 must be above zero',
    );
    expect(mapError('shard,weight\ns-0,-2\n', 'caps.csv')).toBe(
      '--shard-map: "caps.csv" line 2 "s-0,-2": weight -2 must be above zero',
    );
    expect(mapError('shard,weight\ns-0,NaN\n', 'caps.csv')).toBe(
      '--shard-map: "caps.csv" line 2 "s-0,NaN": weight NaN is not a number',
    );
    expect(mapError('shard,weight\ns-0,heavy\n', 'caps.csv')).toContain(
      'weight heavy is not a number',
    );
    expect(mapError('shard,weight\ns-0,\n', 'caps.csv')).toContain('is not a number');
    expect(mapError('shard,weight\ns-0,0x10\n', 'caps.csv')).toContain(
      'weight 0x10 is not a number',
    );
    expect(mapError('shard,weight\ns-0,1e999\n', 'caps.csv')).toContain('is not a finite number');
  });

  it('rejects duplicates, missing headers, wrong field counts and empty maps', () => {
    expect(mapError('shard,weight\ns-0,1\ns-0,2\n', 'dup.csv')).toBe(
      '--shard-map: "dup.csv" line 3 "s-0,2": shard "s-0" is listed twice (first on line 2)',
    );
    expect(mapError('s-0,1\n', 'nohead.csv')).toContain(
      'the first line must be the header shard,weight',
    );
    expect(mapError('shard,weight\ns-0,1,2\n', 'wide.csv')).toContain('expected two fields');
    expect(mapError('shard,weight\n,1\n', 'blank.csv')).toContain('the shard id is empty');
    expect(mapError('shard,weight\n', 'empty.csv')).toBe(
      '--shard-map: "empty.csv" lists no shards',
    );
    expect(mapError('', 'nothing.csv')).toBe('--shard-map: "nothing.csv" lists no shards');
  });

  it('enforces --max-shards', () => {
    expect(mapError('shard,weight\na,1\nb,1\nc,1\n', 'three.csv', 2)).toBe(
      '--shard-map: "three.csv" lists 3 shards, more than --max-shards 2',
    );
  });
});

describe('parseShardMap, JSON', () => {
  it('reads an object of weights, detected by its first character without an extension', () => {
    expect(parseShardMap(' {"a": 1, "b": 0.5}', 'weights', 100)).toEqual({
      ids: ['a', 'b'],
      weights: [1, 0.5],
    });
  });

  it('names the bad entry', () => {
    expect(mapError('{"a": 1, "b": 0}', 'm.json')).toBe(
      '--shard-map: "m.json" entry "b": weight 0 must be above zero',
    );
    expect(mapError('{"a": -1}', 'm.json')).toContain('entry "a": weight -1 must be above zero');
    expect(mapError('{"a": "1.0"}', 'm.json')).toContain('entry "a": weight "1.0" is not a number');
    expect(mapError('{"a": null}', 'm.json')).toContain('entry "a": weight null is not a number');
    expect(mapError('{"a": 1e999}', 'm.json')).toContain('is not a finite number');
  });

  it('rejects repeated keys, which JSON.parse would silently merge', () => {
    expect(mapError('{"a": 1, "b": 2, "a": 3}', 'm.json')).toBe(
      '--shard-map: "m.json" shard "a" is listed twice',
    );
    // The same id spelled with an escape is still the same id.
    expect(mapError('{"a": 1, "\\u0061": 3}', 'm.json')).toContain('shard "a" is listed twice');
  });

  it('rejects non-objects, broken JSON and empty objects', () => {
    expect(mapError('[1, 2]', 'm.json')).toContain('must be a JSON object of shard id to weight');
    expect(mapError('{"a": 1', 'm.json')).toContain('is not valid JSON');
    expect(mapError('{}', 'm.json')).toBe('--shard-map: "m.json" lists no shards');
  });
});
