// Decoding Kafka messages per --shard-from, without a broker. The reference for the
// `field` mode is the file decoder itself (decodeJsonLine): the same line must give the
// same records and reasons; the other modes' expectations follow docs/formats.md.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { decodeJsonLine, type RecordSink } from '../../../src/ingest/decode.js';
import { KafkaMessageDecoder, type ShardFrom } from '../../../src/ingest/kafka/message-decoder.js';
import type { RejectionReason } from '../../../src/window/count-record.js';

const encoder = new TextEncoder();
const bytes = (text: string): Uint8Array => encoder.encode(text);
const stamp = Date.UTC(2025, 11, 1, 10, 0, 0);

type Seen = (
  | { ts: number; shard: string; count: number; key: string | undefined }
  | { reason: RejectionReason }
)[];

function collector(): { sink: RecordSink; seen: Seen } {
  const seen: Seen = [];
  return {
    seen,
    sink: {
      record: (ts, shard, count, key) => seen.push({ ts, shard, count, key }),
      reject: (reason) => seen.push({ reason }),
    },
  };
}

function decode(
  shardFrom: ShardFrom,
  value: string | null,
  key: string | null = null,
  partition = 0,
  messageTs = stamp,
): Seen {
  const { sink, seen } = collector();
  new KafkaMessageDecoder(shardFrom).decode(
    value === null ? null : bytes(value),
    key === null ? null : bytes(key),
    partition,
    messageTs,
    sink,
  );
  return seen;
}

describe('KafkaMessageDecoder, --shard-from field', () => {
  it('decodes like a file line, with the message timestamp where ts is missing', () => {
    expect(decode({ kind: 'field' }, '{"ts":5,"shard":"a","count":2}')).toEqual([
      { ts: 5, shard: 'a', count: 2, key: undefined },
    ]);
    expect(decode({ kind: 'field' }, '{"shard":"a","count":2}')).toEqual([
      { ts: stamp, shard: 'a', count: 2, key: undefined },
    ]);
    expect(decode({ kind: 'field' }, '{"counts":{"a":1,"b":2}}')).toEqual([
      { ts: stamp, shard: 'a', count: 1, key: undefined },
      { ts: stamp, shard: 'b', count: 2, key: undefined },
    ]);
    expect(decode({ kind: 'field' }, null)).toEqual([{ reason: 'not JSON' }]);
    expect(decode({ kind: 'field' }, '{"shard":"a"}', null, 0, -1)).toEqual([
      { reason: 'bad timestamp' },
    ]);
  });

  it('agrees with decodeJsonLine on lines that carry a ts (property)', () => {
    const fields = fc.record(
      {
        ts: fc.oneof(fc.integer({ min: -5, max: 2e12 }), fc.constant('2025-12-01T10:00:00Z')),
        shard: fc.oneof(fc.string({ maxLength: 6 }), fc.nat(40), fc.constant(null)),
        count: fc.oneof(fc.integer({ min: -3, max: 1e6 }), fc.double(), fc.constant('3')),
        key: fc.oneof(fc.string({ maxLength: 4 }), fc.constant(7)),
      },
      { requiredKeys: ['ts'] },
    );
    fc.assert(
      fc.property(fields, (record) => {
        const line = JSON.stringify(record);
        const reference = collector();
        decodeJsonLine(line, reference.sink);
        expect(decode({ kind: 'field' }, line)).toEqual(reference.seen);
      }),
    );
  });
});

describe('KafkaMessageDecoder, --shard-from key', () => {
  it('takes the shard from the key; the value gives ts, count and key, or is one request', () => {
    expect(decode({ kind: 'key' }, '{"ts":9,"count":4,"shard":"ignored"}', 's-3')).toEqual([
      { ts: 9, shard: 's-3', count: 4, key: undefined },
    ]);
    expect(decode({ kind: 'key' }, '{"key":"order:1"}', 's-3')).toEqual([
      { ts: stamp, shard: 's-3', count: 1, key: 'order:1' },
    ]);
    expect(decode({ kind: 'key' }, '', 'shård')).toEqual([
      { ts: stamp, shard: 'shård', count: 1, key: undefined },
    ]);
    expect(decode({ kind: 'key' }, null, 's-3')).toEqual([
      { ts: stamp, shard: 's-3', count: 1, key: undefined },
    ]);
  });

  it('rejects a missing key, a batch, and the usual bad values', () => {
    expect(decode({ kind: 'key' }, '{"count":1}', null)).toEqual([{ reason: 'missing shard' }]);
    expect(decode({ kind: 'key' }, '{"count":1}', '')).toEqual([{ reason: 'missing shard' }]);
    expect(decode({ kind: 'key' }, '{"counts":{"a":1}}', 's')).toEqual([{ reason: 'wrong type' }]);
    expect(decode({ kind: 'key' }, 'nope', 's')).toEqual([{ reason: 'not JSON' }]);
    expect(decode({ kind: 'key' }, '{"count":-1}', 's')).toEqual([{ reason: 'negative count' }]);
    expect(decode({ kind: 'key' }, '{"ts":"soon"}', 's')).toEqual([{ reason: 'bad timestamp' }]);
    expect(decode({ kind: 'key' }, '{}', 'x'.repeat(201))).toEqual([
      { reason: 'shard id too long' },
    ]);
  });
});

describe('KafkaMessageDecoder, --shard-from partition', () => {
  it('counts every message as one request to its partition at the message time, value unread, the message key as its key', () => {
    expect(decode({ kind: 'partition' }, 'any payload at all', null, 7)).toEqual([
      { ts: stamp, shard: '7', count: 1, key: undefined },
    ]);
    expect(decode({ kind: 'partition' }, null, 'k', 0)).toEqual([
      { ts: stamp, shard: '0', count: 1, key: 'k' },
    ]);
    expect(decode({ kind: 'partition' }, '{}', null, 1, Number.NaN)).toEqual([
      { reason: 'bad timestamp' },
    ]);
  });
});

describe('KafkaMessageDecoder, --shard-from field:NAME', () => {
  it('takes the shard from the named field (text or a whole number)', () => {
    const tenant: ShardFrom = { kind: 'named-field', field: 'tenant' };
    expect(decode(tenant, '{"ts":3,"tenant":"t-1","count":2}')).toEqual([
      { ts: 3, shard: 't-1', count: 2, key: undefined },
    ]);
    expect(decode(tenant, '{"tenant":12}')).toEqual([
      { ts: stamp, shard: '12', count: 1, key: undefined },
    ]);
    expect(decode(tenant, '{"shard":"s-1"}')).toEqual([{ reason: 'missing shard' }]);
    expect(decode(tenant, '{"tenant":true}')).toEqual([{ reason: 'wrong type' }]);
    expect(decode(tenant, '{"tenant":"a","key":5}')).toEqual([{ reason: 'wrong type' }]);
    expect(decode(tenant, '[]')).toEqual([{ reason: 'wrong type' }]);
    expect(decode(tenant, null)).toEqual([{ reason: 'not JSON' }]);
  });
});

describe('KafkaMessageDecoder, bytes that are not UTF-8', () => {
  // Unicode's well-formed UTF-8 sequences: FF and FE occur in none; a WHATWG decoder would
  // make both U+FFFD and merge the two ids.
  const withByte = (before: string, byte: number, after: string): Uint8Array =>
    Uint8Array.of(...bytes(before), byte, ...bytes(after));
  function decodeBytes(shardFrom: ShardFrom, value: Uint8Array | null, key: Uint8Array | null) {
    const { sink, seen } = collector();
    new KafkaMessageDecoder(shardFrom).decode(value, key, 3, stamp, sink);
    return seen;
  }
  const invalid = [{ reason: 'invalid UTF-8' }];

  it("rejects a value whose shard or key is not UTF-8, keeping a batch's good entries", () => {
    expect(decodeBytes({ kind: 'field' }, withByte('{"shard":"a', 0xff, '"}'), null)).toEqual(
      invalid,
    );
    expect(
      decodeBytes({ kind: 'field' }, withByte('{"counts":{"b":2,"a', 0xfe, '":1}}'), null),
    ).toEqual([{ ts: stamp, shard: 'b', count: 2, key: undefined }, ...invalid]);
    expect(
      decodeBytes({ kind: 'named-field', field: 'node' }, withByte('{"node":"a', 0xff, '"}'), null),
    ).toEqual(invalid);
    expect(
      decodeBytes({ kind: 'field' }, withByte('{"shard":"a","key":"', 0xfe, '"}'), null),
    ).toEqual(invalid);
  });

  it('rejects a message key that is not UTF-8, as shard id or as request key', () => {
    expect(decodeBytes({ kind: 'key' }, null, Uint8Array.of(0x61, 0xff))).toEqual(invalid);
    expect(decodeBytes({ kind: 'key' }, bytes('{"count":2}'), Uint8Array.of(0x61, 0xfe))).toEqual(
      invalid,
    );
    expect(decodeBytes({ kind: 'partition' }, null, Uint8Array.of(0x6b, 0xff))).toEqual(invalid);
  });

  it('keeps a genuine U+FFFD (EF BF BD) in a key or value', () => {
    expect(decodeBytes({ kind: 'key' }, null, bytes('a\uFFFD'))).toEqual([
      { ts: stamp, shard: 'a\uFFFD', count: 1, key: undefined },
    ]);
    expect(decodeBytes({ kind: 'partition' }, null, bytes('k\uFFFD'))).toEqual([
      { ts: stamp, shard: '3', count: 1, key: 'k\uFFFD' },
    ]);
  });
});
