import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  decodeCsvLine,
  decodeJsonLine,
  parseCsvHeader,
  type CsvColumns,
} from '../../src/ingest/decode.js';
import { csvHeader, encodeCsvLine, encodeJsonLine } from '../../src/ingest/encode.js';
import type { CountRecord } from '../../src/window/count-record.js';

function decodedJson(line: string): CountRecord[] {
  const out: CountRecord[] = [];
  decodeJsonLine(line, {
    record: (ts, shard, count, key) =>
      out.push(key === undefined ? { ts, shard, count } : { ts, shard, count, key }),
    reject: (reason) => {
      throw new Error(reason);
    },
  });
  return out;
}

describe('encodeJsonLine', () => {
  it('writes the wire shapes of docs/formats.md', () => {
    expect(encodeJsonLine({ ts: 1_764_583_200_000, shard: 's-17', count: 42 })).toBe(
      '{"ts":1764583200000,"shard":"s-17","count":42}',
    );
    expect(encodeJsonLine({ ts: 1, shard: 's-17', count: 1, key: 'order:991' })).toBe(
      '{"ts":1,"shard":"s-17","key":"order:991"}',
    );
    expect(encodeJsonLine({ ts: 1, shard: 'a', count: 3, key: 'k' })).toBe(
      '{"ts":1,"shard":"a","count":3,"key":"k"}',
    );
  });

  it('decodes back to the same record (property)', () => {
    const record = fc.record(
      {
        ts: fc.integer({ min: 0, max: 253_402_300_799_999 }),
        shard: fc.string({ minLength: 1, maxLength: 200, unit: 'grapheme' }),
        count: fc.nat(),
        key: fc.string({ unit: 'grapheme' }),
      },
      { requiredKeys: ['ts', 'shard', 'count'] },
    );
    fc.assert(
      fc.property(record, (value) => {
        const expected =
          value.key === undefined || value.count !== 1 ? value : { ...value, count: 1 };
        expect(decodedJson(encodeJsonLine(value))).toEqual([expected]);
      }),
      { numRuns: 2000, seed: 5 },
    );
  });
});

describe('encodeCsvLine', () => {
  it('quotes what needs quoting and decodes back to the same record (property)', () => {
    const columns = parseCsvHeader(csvHeader) as CsvColumns;
    expect(encodeCsvLine({ ts: 5, shard: 'a,"b"', count: 2 })).toBe('5,"a,""b""",2,');
    fc.assert(
      fc.property(
        fc.record({
          ts: fc.integer({ min: 0, max: 253_402_300_799_999 }),
          shard: fc
            .string({ minLength: 1, maxLength: 50, unit: 'grapheme' })
            .filter((id) => !/[\r\n]/.test(id)),
          count: fc.nat(),
        }),
        (value) => {
          const out: CountRecord[] = [];
          decodeCsvLine(encodeCsvLine(value), columns, {
            record: (ts, shard, count) => out.push({ ts, shard, count }),
            reject: (reason) => {
              throw new Error(reason);
            },
          });
          expect(out).toEqual([value]);
        },
      ),
      { numRuns: 2000, seed: 6 },
    );
  });
});
