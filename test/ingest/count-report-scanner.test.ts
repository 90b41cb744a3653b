import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { decodeJsonBytes } from '../../src/ingest/count-report-scanner.js';
import { decodeJsonLine, type RecordSink } from '../../src/ingest/decode.js';
import { ShardIdCache } from '../../src/ingest/shard-id-cache.js';

type Call = readonly [string, ...unknown[]];

function recorder(): RecordSink & { calls: Call[] } {
  const calls: Call[] = [];
  return {
    calls,
    record: (ts, shard, count, key) => calls.push(['record', ts, shard, count, key]),
    reject: (reason) => calls.push(['reject', reason]),
  };
}

const encoder = new TextEncoder();

function viaBytes(line: string, ids = new ShardIdCache()): Call[] {
  const into = recorder();
  // Padding on both sides checks that the scanner keeps to its span.
  const bytes = encoder.encode(`}"7\n${line}\n{"ts"`);
  const start = encoder.encode('}"7\n').length;
  decodeJsonBytes(bytes, start, start + encoder.encode(line).length, into, ids);
  return into.calls;
}

function viaJsonParse(line: string): Call[] {
  const into = recorder();
  decodeJsonLine(line, into);
  return into.calls;
}

const ts = 1_764_583_200_000;

describe('decodeJsonBytes', () => {
  it('reads the common count-report shape', () => {
    expect(viaBytes(`{"ts":${ts},"shard":"s-17","count":42}`)).toEqual([
      ['record', ts, 's-17', 42, undefined],
    ]);
    expect(viaBytes(` { "ts" : ${ts} ,\t"shard" : "s 1" , "count" : 0 } `)).toEqual([
      ['record', ts, 's 1', 0, undefined],
    ]);
  });

  it('gives the JSON.parse answer on lines the scanner must hand over', () => {
    // Each line breaks one rule of the scanned shape; the answers are JSON.parse's (the reference).
    const lines = [
      `{"ts":0${ts},"shard":"a","count":1}`,
      `{"ts":${ts},"shard":"a","count":01}`,
      `{"ts":${ts},"shard":"a","count":-1}`,
      `{"ts":${ts},"shard":"a","count":1.5}`,
      `{"ts":${ts},"shard":"a","count":1e2}`,
      `{"ts":${ts},"shard":"a","count":1E2}`,
      `{"ts":${ts}.0,"shard":"a","count":1}`,
      `{"ts":${ts},"shard":"a\\"b","count":1}`,
      `{"ts":${ts},"shard":"a\\u0062","count":1}`,
      `{"ts":${ts},"shard":"ä","count":1}`,
      `{"ts":${ts},"shard":"a\tb","count":1}`,
      `{"ts":${ts},"shard":"","count":1}`,
      `{"ts":${ts},"shard":"${'z'.repeat(201)}","count":1}`,
      `{"ts":99999999999999999,"shard":"a","count":1}`,
      `{"ts":${ts},"shard":"a","count":1234567890123456}`,
      `{"ts":${ts},"shard":"a","count":1}x`,
      `{"ts":${ts},"shard":"a","count":1}}`,
      `{"ts":${ts},"shard":"a","count":1,"key":"k"}`,
      `{"shard":"a","ts":${ts},"count":1}`,
      `{"ts":${ts},"shard":"a","count":1`,
      `{"ts":${ts},"shard":"a"}`,
      `{"ts":${ts},"shard":"a","count":}`,
      `{"ts":253402300800000,"shard":"a","count":1}`,
      `\u00a0{"ts":${ts},"shard":"a","count":1}`,
      '',
      '{',
    ];
    for (const line of lines) expect(viaBytes(line), line).toEqual(viaJsonParse(line));
  });

  it('agrees with JSON.parse on fuzzed lines near and far from the scanned shape (property)', () => {
    // The reference is decodeJsonLine (JSON.parse). Generators mix valid reports with the
    // mistakes that matter to a hand scanner: numbers, escapes, spacing, order, truncation.
    const rarely = <T>(usual: fc.Arbitrary<T>, odd: fc.Arbitrary<T>) =>
      fc.oneof({ weight: 9, arbitrary: usual }, { weight: 1, arbitrary: odd });
    const space = rarely(
      fc.constantFrom('', '', ' ', '\t'),
      fc.constantFrom('\r', '\n', '\u00a0', '\f'),
    );
    const number = rarely(
      fc.oneof(fc.nat({ max: 10_000 }).map(String), fc.constant(String(ts))),
      fc.constantFrom(
        '00',
        '01',
        '-0',
        '-1',
        '1.5',
        '1e3',
        '1E3',
        '1.',
        '.5',
        '9007199254740993',
        '999999999999999',
        '1000000000000000',
        '',
        'true',
        '"5"',
        'null',
      ),
    );
    const idText = rarely(
      fc
        .string({
          unit: fc.integer({ min: 0x20, max: 0x7e }).map((code) => String.fromCharCode(code)),
          maxLength: 12,
        })
        .map((id) => id.replaceAll('\\', '').replaceAll('"', '')),
      fc.oneof(
        fc.string({ unit: 'grapheme', maxLength: 6 }),
        fc.constantFrom('a\\"b', 'a\\\\', 'a\\u0041', '\\n', 'x'.repeat(201), 'x'.repeat(200), ''),
      ),
    );
    const fieldName = (name: string) =>
      rarely(
        fc.constant(`"${name}"`),
        fc.constantFrom(`"${name.toUpperCase()}"`, name, `"${name} "`, `'${name}'`),
      );
    const nearShape = fc
      .tuple(
        fc.array(space, { minLength: 14, maxLength: 14 }),
        fieldName('ts'),
        number,
        fieldName('shard'),
        idText,
        fieldName('count'),
        number,
      )
      .map(
        ([s, tsName, tsValue, shardName, id, countName, countValue]) =>
          `${s[0]}{${s[1]}${tsName}${s[2]}:${s[3]}${tsValue}${s[4]},${s[5]}${shardName}${s[6]}:${s[7]}"${id}"${s[8]},${s[9]}${countName}${s[10]}:${s[11]}${countValue}${s[12]}}${s[13]}`,
      );
    const mutated = fc
      .tuple(
        nearShape,
        fc.nat(),
        fc.constantFrom('cut', 'insert', 'delete'),
        fc.string({ unit: 'binary-ascii', maxLength: 3 }),
      )
      .map(([line, at, how, text]) => {
        // By code point: a line read from UTF-8 bytes can never hold half a surrogate pair.
        const points = Array.from(line);
        const position = points.length === 0 ? 0 : at % points.length;
        const before = points.slice(0, position).join('');
        if (how === 'cut') return before;
        if (how === 'insert') return before + text + points.slice(position).join('');
        return before + points.slice(position + 1).join('');
      });
    const anyJson = fc.json({ maxDepth: 2 });
    const anyText = fc.string({ unit: 'grapheme', maxLength: 40 });
    let records = 0;
    fc.assert(
      fc.property(fc.oneof(nearShape, nearShape, mutated, mutated, anyJson, anyText), (line) => {
        const answer = viaJsonParse(line);
        expect(viaBytes(line)).toEqual(answer);
        if (answer[0]?.[0] === 'record') records++;
      }),
      { numRuns: 20_000, seed: 424242 },
    );
    // The property only means something if many lines were good records (the scanner's path).
    expect(records).toBeGreaterThan(2000);
  });

  it('returns a cached id for a repeated shard and a fresh one after a change', () => {
    const ids = new ShardIdCache(4);
    const first = viaBytes(`{"ts":${ts},"shard":"s-1","count":1}`, ids);
    const second = viaBytes(`{"ts":${ts},"shard":"s-1","count":2}`, ids);
    const other = viaBytes(`{"ts":${ts},"shard":"s-2","count":3}`, ids);
    expect(first[0][2]).toBe('s-1');
    expect(second[0][2]).toBe('s-1');
    expect(other[0][2]).toBe('s-2');
  });
});

describe('decodeJsonBytes, bytes that are not UTF-8', () => {
  // Unicode's well-formed UTF-8 sequences: FF and FE occur in none. The scanner hands such
  // lines to JSON.parse; the two ids must stay two rejections, not one shard a\uFFFD.
  it('rejects ids with invalid bytes, each on its own', () => {
    for (const byte of [0xff, 0xfe, 0x80]) {
      const line = Uint8Array.of(
        ...encoder.encode('{"ts":5,"shard":"a'),
        byte,
        ...encoder.encode('","count":1}'),
      );
      const into = recorder();
      decodeJsonBytes(line, 0, line.length, into, new ShardIdCache());
      expect(into.calls).toEqual([['reject', 'invalid UTF-8']]);
    }
  });
});
