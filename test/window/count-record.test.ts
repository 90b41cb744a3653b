import { describe, expect, it } from 'vitest';
import { isRejection, rejectionReasons } from '../../src/window/count-record.js';

describe('rejection reasons', () => {
  it("are the stable labels of the record format plus this project's additions, each once", () => {
    // The exact strings are a contract (metric labels, docs/formats): never reworded, only added to.
    expect([...rejectionReasons].sort()).toEqual(
      [
        'not JSON',
        'wrong type',
        'negative count',
        'non-integer count',
        'missing shard',
        'outside universe',
        'bad timestamp',
        'too late',
        'too many shards',
        'line too long',
        'shard id too long',
        'too far ahead',
        'invalid UTF-8',
      ].sort(),
    );
  });

  it('tell a rejection from a record', () => {
    expect(isRejection({ reason: 'not JSON', line: 3 })).toBe(true);
    expect(isRejection({ ts: 0, shard: 'a', count: 0 })).toBe(false);
  });
});
