import { longestShardId, type RejectionReason } from '../window/count-record.js';
import { splitCsvRecord } from '../window/csv-record.js';
import { checkEpochMs, parseIsoTimestamp } from './timestamp.js';
import { isWellFormedText } from './utf8-text.js';

/**
 * Where decoded records go. Called synchronously, once per record or
 * rejection, so a caller can count straight into windows without building an
 * object per record.
 */
export interface RecordSink {
  /** A valid record: `count` is a whole number >= 0, `shard` 1..200 characters; shard and key well-formed text. */
  record(ts: number, shard: string, count: number, key: string | undefined): void;
  /** A record that failed validation. */
  reject(reason: RejectionReason): void;
}

/**
 * Lines longer than this are rejected unread: 1 MiB, counted in bytes of
 * UTF-8 for files and byte buffers, in UTF-16 code units for strings.
 */
export const longestLine = 1 << 20;

/**
 * Decodes one JSON Lines record into `sink`: a count report
 * `{"ts","shard","count"}`, a count batch `{"ts","counts":{shard: count}}` or
 * a request event `{"ts","shard","key"?}` (count 1). `ts` is epoch ms or an
 * ISO-8601 string with a zone; `fallbackTs` stands in when it is absent or
 * null (a Kafka message's own timestamp), NaN meaning there is none.
 *
 * A problem of the whole line (not JSON, not an object, both `counts` and
 * `shard`/`count`, bad timestamp) is one rejection; in a batch, a bad entry
 * rejects only that entry. A shard may be a string or a non-negative whole
 * number (partition numbers), kept as text; an empty or null one is
 * "missing shard", one over 200 characters "shard id too long"; a shard or key
 * that is not well-formed text (bytes that were not UTF-8, marked by
 * decodeUtf8Marked, or a lone surrogate from a `\ud800` escape) is "invalid UTF-8". Counts must
 * be numbers (a string "42" is "wrong type") and whole numbers a double holds
 * exactly (up to 2^53 - 1); larger ones are "non-integer count". A key must be
 * a string. Extra fields are ignored. O(length).
 */
export function decodeJsonLine(line: string, sink: RecordSink, fallbackTs = Number.NaN): void {
  if (line.length > longestLine) {
    sink.reject('line too long');
    return;
  }
  const fields = parseRecordObject(line, sink);
  if (fields === undefined) return;
  const batch = fields.counts;
  if (batch !== undefined && (fields.shard !== undefined || fields.count !== undefined)) {
    sink.reject('wrong type');
    return;
  }
  if (
    batch !== undefined &&
    (batch === null || typeof batch !== 'object' || Array.isArray(batch))
  ) {
    sink.reject('wrong type');
    return;
  }
  const ts = readTimestamp(fields.ts, fallbackTs, sink);
  if (Number.isNaN(ts)) return;
  if (batch !== undefined) {
    for (const [shard, count] of Object.entries(batch as Record<string, unknown>)) {
      emitChecked(ts, shard, count, undefined, sink);
    }
    return;
  }
  const shard = readShard(fields.shard, sink);
  if (shard === undefined) return;
  emitRecordFields(ts, shard, fields, sink);
}

/**
 * A JSON record's text parsed: its fields, or undefined when it is "not JSON" or not an
 * object ("wrong type"), said to `sink`. The first step of every JSON decoding path (file and
 * Kafka), after the length check each makes in its own unit.
 */
export function parseRecordObject(
  text: string,
  sink: RecordSink,
): Record<string, unknown> | undefined {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch {
    sink.reject('not JSON');
    return undefined;
  }
  if (value === null || typeof value !== 'object' || Array.isArray(value)) {
    sink.reject('wrong type');
    return undefined;
  }
  return value as Record<string, unknown>;
}

/**
 * The last step of a JSON record whose `ts` and shard are read: its `key` (a string; null or
 * absent is none) and `count` (absent: 1, a request event) go to {@link emitChecked}.
 */
export function emitRecordFields(
  ts: number,
  shard: string,
  fields: Record<string, unknown>,
  sink: RecordSink,
): void {
  const key = fields.key;
  if (key !== undefined && key !== null && typeof key !== 'string') {
    sink.reject('wrong type');
    return;
  }
  emitChecked(ts, shard, fields.count === undefined ? 1 : fields.count, key ?? undefined, sink);
}

/** The columns of a record CSV file, by position; -1 where a column is absent. */
export interface CsvColumns {
  readonly width: number;
  readonly ts: number;
  readonly shard: number;
  /** Absent: every line is one request (count 1). */
  readonly count: number;
  readonly key: number;
}

/**
 * Reads a record CSV header. It must name `ts` and `shard` (any order, any
 * case) and may name `count` and `key`; other columns are ignored. Returns
 * null when the line is not such a header.
 *
 * @example parseCsvHeader('ts,shard,count') // {width: 3, ts: 0, shard: 1, count: 2, key: -1}
 */
export function parseCsvHeader(line: string): CsvColumns | null {
  const names = splitCsvRecord(line)?.map((name) => name.toLowerCase());
  if (names === undefined || new Set(names).size !== names.length) return null;
  const ts = names.indexOf('ts');
  const shard = names.indexOf('shard');
  if (ts < 0 || shard < 0) return null;
  return {
    width: names.length,
    ts,
    shard,
    count: names.indexOf('count'),
    key: names.indexOf('key'),
  };
}

/**
 * Decodes one CSV data line laid out as `columns`. `ts` is epoch ms digits or
 * ISO-8601 with a zone; `count` is a decimal whole number (`1.0` is taken as
 * 1, as JSON would); an empty key is no key. A line with the wrong number of
 * fields or broken quoting is "wrong type". O(length).
 */
export function decodeCsvLine(line: string, columns: CsvColumns, sink: RecordSink): void {
  if (line.length > longestLine) {
    sink.reject('line too long');
    return;
  }
  const fields = splitCsvRecord(line);
  if (fields === null || fields.length !== columns.width) {
    sink.reject('wrong type');
    return;
  }
  const tsText = fields[columns.ts];
  const ts = /^\d{1,16}$/.test(tsText) ? checkEpochMs(Number(tsText)) : parseIsoTimestamp(tsText);
  if (Number.isNaN(ts)) {
    sink.reject('bad timestamp');
    return;
  }
  let count: unknown = 1;
  if (columns.count >= 0) {
    const countText = fields[columns.count];
    count = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(countText)
      ? Number(countText)
      : countText;
  }
  const key = columns.key >= 0 && fields[columns.key] !== '' ? fields[columns.key] : undefined;
  emitChecked(ts, fields[columns.shard], count, key, sink);
}

/**
 * A JSON record's `ts` field as epoch ms: a number of ms or ISO-8601 text with a zone;
 * `fallbackTs` when it is absent or null (NaN: there is none). NaN when it is none of these,
 * said to `sink` as "bad timestamp".
 */
export function readTimestamp(value: unknown, fallbackTs: number, sink: RecordSink): number {
  let ts = Number.NaN;
  if (value === undefined || value === null) ts = checkEpochMs(fallbackTs);
  else if (typeof value === 'number') ts = checkEpochMs(value);
  else if (typeof value === 'string') ts = parseIsoTimestamp(value);
  if (Number.isNaN(ts)) sink.reject('bad timestamp');
  return ts;
}

/**
 * A JSON record's shard field as an id: a string, or a whole number >= 0 (a partition number)
 * kept as text. Undefined when it is absent or null ("missing shard") or anything else
 * ("wrong type"), said to `sink`.
 */
export function readShard(value: unknown, sink: RecordSink): string | undefined {
  if (typeof value === 'string') return value;
  if (typeof value === 'number' && Number.isSafeInteger(value) && value >= 0) return String(value);
  sink.reject(value === undefined || value === null ? 'missing shard' : 'wrong type');
  return undefined;
}

/**
 * Checks a record's shard and count and hands it to the sink: the last step
 * of every decoding path (JSON, CSV, Kafka), so they cannot drift apart on
 * what a valid record is. `ts` must already be checked.
 */
export function emitChecked(
  ts: number,
  shard: string,
  count: unknown,
  key: string | undefined,
  sink: RecordSink,
): void {
  // A missing shard is said as such (by emitWellFormed) before any text is checked.
  const illFormed = !isWellFormedText(shard) || (key !== undefined && !isWellFormedText(key));
  if (shard !== '' && illFormed) {
    sink.reject('invalid UTF-8');
    return;
  }
  emitWellFormed(ts, shard, count, key, sink);
}

/**
 * {@link emitChecked} for a shard and key already known to be well-formed text:
 * the byte scanner's ids are printable ASCII, and checking them again would cost
 * a call per record on the fast path.
 */
export function emitWellFormed(
  ts: number,
  shard: string,
  count: unknown,
  key: string | undefined,
  sink: RecordSink,
): void {
  if (shard === '') {
    sink.reject('missing shard');
    return;
  }
  if (shard.length > longestShardId) {
    sink.reject('shard id too long');
    return;
  }
  if (typeof count !== 'number') {
    sink.reject('wrong type');
    return;
  }
  if (count < 0) {
    sink.reject('negative count');
    return;
  }
  if (!Number.isSafeInteger(count)) {
    sink.reject('non-integer count');
    return;
  }
  sink.record(ts, shard, count + 0, key);
}
