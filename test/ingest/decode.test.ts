import { describe, expect, it } from 'vitest';
import {
  decodeCsvLine,
  decodeJsonLine,
  longestLine,
  parseCsvHeader,
  type CsvColumns,
  type RecordSink,
} from '../../src/ingest/decode.js';
import type { CountRecord, RejectionReason } from '../../src/window/count-record.js';

interface Decoded {
  records: CountRecord[];
  rejected: RejectionReason[];
}

function sink(): RecordSink & Decoded {
  const records: CountRecord[] = [];
  const rejected: RejectionReason[] = [];
  return {
    records,
    rejected,
    record(ts, shard, count, key) {
      records.push(key === undefined ? { ts, shard, count } : { ts, shard, count, key });
    },
    reject(reason) {
      rejected.push(reason);
    },
  };
}

function json(line: string, fallbackTs?: number): Decoded {
  const into = sink();
  decodeJsonLine(line, into, fallbackTs);
  return { records: into.records, rejected: into.rejected };
}

function reasonOf(line: string): RejectionReason[] {
  const decoded = json(line);
  expect(decoded.records).toEqual([]);
  return decoded.rejected;
}

const ts = 1_764_583_200_000; // 2025-12-01T10:00:00Z

// Record shapes and reasons are those of docs/formats.md ("Records on the wire").
describe('decodeJsonLine, the three record kinds', () => {
  it('reads a count report', () => {
    expect(json(`{"ts": ${ts}, "shard": "s-17", "count": 42}`)).toEqual({
      records: [{ ts, shard: 's-17', count: 42 }],
      rejected: [],
    });
  });

  it('reads a count batch as one record per shard', () => {
    expect(json(`{"ts": ${ts}, "counts": {"s-17": 42, "s-3": 7}}`).records).toEqual([
      { ts, shard: 's-17', count: 42 },
      { ts, shard: 's-3', count: 7 },
    ]);
    expect(json(`{"ts": ${ts}, "counts": {}}`)).toEqual({ records: [], rejected: [] });
  });

  it('reads a request event as count 1 and keeps its key', () => {
    expect(json(`{"ts": ${ts}, "shard": "s-17", "key": "order:991"}`).records).toEqual([
      { ts, shard: 's-17', count: 1, key: 'order:991' },
    ]);
    expect(json(`{"ts": ${ts}, "shard": "s-17"}`).records).toEqual([
      { ts, shard: 's-17', count: 1 },
    ]);
    expect(json(`{"ts": ${ts}, "shard": "s-17", "key": null}`).records).toEqual([
      { ts, shard: 's-17', count: 1 },
    ]);
  });

  it('takes ISO-8601 times with a zone, numeric shard ids, zero counts and extra fields', () => {
    expect(
      json('{"ts": "2025-12-01T11:00:00+01:00", "shard": 17, "count": 0, "host": "x"}').records,
    ).toEqual([{ ts, shard: '17', count: 0 }]);
    // 1.0 is the number 1 in JSON, a whole number.
    expect(json(`{"ts": ${ts}, "shard": "a", "count": 1.0}`).records).toEqual([
      { ts, shard: 'a', count: 1 },
    ]);
  });

  it('uses the fallback time only when ts is absent or null', () => {
    expect(json('{"shard": "a", "count": 2}', ts).records).toEqual([{ ts, shard: 'a', count: 2 }]);
    expect(json('{"ts": null, "shard": "a", "count": 2}', ts).records).toEqual([
      { ts, shard: 'a', count: 2 },
    ]);
    expect(json('{"ts": "soon", "shard": "a", "count": 2}', ts).rejected).toEqual([
      'bad timestamp',
    ]);
  });
});

describe('decodeJsonLine, every rejection reason', () => {
  it('"not JSON"', () => {
    expect(reasonOf('{"ts": 1, "shard": "a"')).toEqual(['not JSON']);
    expect(reasonOf('hello')).toEqual(['not JSON']);
    expect(reasonOf('')).toEqual(['not JSON']);
    expect(reasonOf('{"ts": 01, "shard": "a", "count": 1}')).toEqual(['not JSON']);
  });

  it('"wrong type"', () => {
    expect(reasonOf('[1, 2]')).toEqual(['wrong type']);
    expect(reasonOf('42')).toEqual(['wrong type']);
    expect(reasonOf('null')).toEqual(['wrong type']);
    expect(reasonOf(`{"ts": ${ts}, "shard": "a", "count": "5"}`)).toEqual(['wrong type']);
    expect(reasonOf(`{"ts": ${ts}, "shard": true, "count": 5}`)).toEqual(['wrong type']);
    expect(reasonOf(`{"ts": ${ts}, "shard": 1.5, "count": 5}`)).toEqual(['wrong type']);
    expect(reasonOf(`{"ts": ${ts}, "shard": "a", "key": 7}`)).toEqual(['wrong type']);
    expect(reasonOf(`{"ts": ${ts}, "counts": [1, 2]}`)).toEqual(['wrong type']);
    expect(reasonOf(`{"ts": ${ts}, "counts": {"a": 1}, "shard": "a"}`)).toEqual(['wrong type']);
  });

  it('"negative count" and "non-integer count"', () => {
    expect(reasonOf(`{"ts": ${ts}, "shard": "a", "count": -1}`)).toEqual(['negative count']);
    expect(reasonOf(`{"ts": ${ts}, "shard": "a", "count": -0.5}`)).toEqual(['negative count']);
    expect(reasonOf(`{"ts": ${ts}, "shard": "a", "count": 1.5}`)).toEqual(['non-integer count']);
    // 2^53 is the first whole number a double cannot tell from its neighbour.
    expect(reasonOf(`{"ts": ${ts}, "shard": "a", "count": 9007199254740992}`)).toEqual([
      'non-integer count',
    ]);
    expect(json(`{"ts": ${ts}, "shard": "a", "count": 9007199254740991}`).records).toHaveLength(1);
  });

  it('"missing shard" and "shard id too long"', () => {
    expect(reasonOf(`{"ts": ${ts}, "count": 1}`)).toEqual(['missing shard']);
    expect(reasonOf(`{"ts": ${ts}, "shard": "", "count": 1}`)).toEqual(['missing shard']);
    expect(reasonOf(`{"ts": ${ts}, "shard": null, "count": 1}`)).toEqual(['missing shard']);
    expect(reasonOf(`{"ts": ${ts}, "shard": "${'x'.repeat(201)}", "count": 1}`)).toEqual([
      'shard id too long',
    ]);
    expect(json(`{"ts": ${ts}, "shard": "${'x'.repeat(200)}", "count": 1}`).records).toHaveLength(
      1,
    );
  });

  it('"bad timestamp"', () => {
    expect(reasonOf('{"ts": "2025-12-01T10:00:00", "shard": "a", "count": 1}')).toEqual([
      'bad timestamp',
    ]);
    expect(reasonOf('{"ts": "1764583200000", "shard": "a", "count": 1}')).toEqual([
      'bad timestamp',
    ]);
    expect(reasonOf('{"ts": -5, "shard": "a", "count": 1}')).toEqual(['bad timestamp']);
    expect(reasonOf('{"ts": {"ms": 5}, "shard": "a", "count": 1}')).toEqual(['bad timestamp']);
    expect(reasonOf('{"shard": "a", "count": 1}')).toEqual(['bad timestamp']);
    // A line-level problem is one rejection, however many entries the batch has.
    expect(reasonOf('{"ts": "later", "counts": {"a": 1, "b": 2}}')).toEqual(['bad timestamp']);
  });

  it('"line too long"', () => {
    const long = `{"ts": ${ts}, "shard": "a", "count": 1, "pad": "${'x'.repeat(longestLine)}"}`;
    expect(reasonOf(long)).toEqual(['line too long']);
  });

  it('rejects only the bad entries of a batch', () => {
    const decoded = json(
      `{"ts": ${ts}, "counts": {"a": 1, "b": -2, "c": 2.5, "": 3, "d": "4", "e": 5}}`,
    );
    expect(decoded.records).toEqual([
      { ts, shard: 'a', count: 1 },
      { ts, shard: 'e', count: 5 },
    ]);
    expect(decoded.rejected).toEqual([
      'negative count',
      'non-integer count',
      'missing shard',
      'wrong type',
    ]);
  });
});

describe('decodeJsonLine, "invalid UTF-8" for lone surrogates from escapes', () => {
  // RFC 8259 section 8.2: an escape of a lone surrogate ("\ud800") parses, but the string
  // is not well-formed Unicode text; Unicode's definition of well-formed UTF-16 forbids it.
  it('rejects a shard id or key holding a lone surrogate, and only that entry of a batch', () => {
    expect(reasonOf(`{"ts": ${ts}, "shard": "a\\ud800", "count": 1}`)).toEqual(['invalid UTF-8']);
    expect(reasonOf(`{"ts": ${ts}, "shard": "a", "key": "k\\udfff"}`)).toEqual(['invalid UTF-8']);
    const decoded = json(`{"ts": ${ts}, "counts": {"a\\ud800": 1, "a\\ud801": 2, "b": 3}}`);
    expect(decoded.records).toEqual([{ ts, shard: 'b', count: 3 }]);
    expect(decoded.rejected).toEqual(['invalid UTF-8', 'invalid UTF-8']);
  });

  it('says a missing shard before an ill-formed key (the check order of emitChecked)', () => {
    expect(reasonOf(`{"ts": ${ts}, "shard": "", "key": "k\\udfff"}`)).toEqual(['missing shard']);
  });

  it('keeps escaped surrogate pairs and a genuine U+FFFD', () => {
    expect(json(`{"ts": ${ts}, "shard": "\\ud83d\\ude00", "key": "\\ufffd"}`).records).toEqual([
      { ts, shard: '\u{1f600}', count: 1, key: '\ufffd' },
    ]);
  });
});

describe('CSV records', () => {
  const columns = parseCsvHeader('ts,shard,count') as CsvColumns;

  function csv(line: string, layout = columns): Decoded {
    const into = sink();
    decodeCsvLine(line, layout, into);
    return { records: into.records, rejected: into.rejected };
  }

  it('reads headers in any order and case, with optional count and key', () => {
    expect(parseCsvHeader('ts,shard,count')).toEqual({
      width: 3,
      ts: 0,
      shard: 1,
      count: 2,
      key: -1,
    });
    expect(parseCsvHeader('Shard, TS, key, region')).toEqual({
      width: 4,
      ts: 1,
      shard: 0,
      count: -1,
      key: 2,
    });
    expect(parseCsvHeader('ts,count')).toBeNull();
    expect(parseCsvHeader('ts,shard,ts')).toBeNull();
    expect(parseCsvHeader('1764583200000,s-1,4')).toBeNull();
  });

  it('reads epoch ms and ISO times, quoted ids and decimal counts', () => {
    expect(csv(`${ts},s-17,42`).records).toEqual([{ ts, shard: 's-17', count: 42 }]);
    expect(csv('2025-12-01T10:00:00Z,"s,17",1.0').records).toEqual([
      { ts, shard: 's,17', count: 1 },
    ]);
    expect(csv(`${ts}, s-1 ,1e2`).records).toEqual([{ ts, shard: 's-1', count: 100 }]);
  });

  it('reads request events with keys when there is no count column', () => {
    const events = parseCsvHeader('ts,shard,key') as CsvColumns;
    expect(csv(`${ts},s-1,order:9`, events).records).toEqual([
      { ts, shard: 's-1', count: 1, key: 'order:9' },
    ]);
    expect(csv(`${ts},s-1,`, events).records).toEqual([{ ts, shard: 's-1', count: 1 }]);
  });

  it('rejects each kind of bad line', () => {
    expect(csv(`${ts},s-1`).rejected).toEqual(['wrong type']);
    expect(csv(`${ts},s-1,1,extra`).rejected).toEqual(['wrong type']);
    expect(csv(`${ts},"s-1,1`).rejected).toEqual(['wrong type']);
    expect(csv(`${ts},s-1,many`).rejected).toEqual(['wrong type']);
    expect(csv(`${ts},s-1,`).rejected).toEqual(['wrong type']);
    expect(csv(`${ts},s-1,-3`).rejected).toEqual(['negative count']);
    expect(csv(`${ts},s-1,2.5`).rejected).toEqual(['non-integer count']);
    expect(csv(`${ts},,1`).rejected).toEqual(['missing shard']);
    expect(csv(`${ts},${'y'.repeat(201)},1`).rejected).toEqual(['shard id too long']);
    expect(csv('2025-12-01 10:00,s-1,1').rejected).toEqual(['bad timestamp']);
    expect(csv(',s-1,1').rejected).toEqual(['bad timestamp']);
    expect(csv('-5,s-1,1').rejected).toEqual(['bad timestamp']);
    expect(csv(`${ts},s-1,${'9'.repeat(longestLine)}`).rejected).toEqual(['line too long']);
  });
});
