import type { CountRecord } from '../window/count-record.js';

/**
 * Writes a record as one JSON Lines record of docs/formats.md, timestamps as
 * epoch ms: a request event (`{"ts","shard","key"}`) when it has a key and a
 * count of 1, otherwise a count report (`{"ts","shard","count"}`, plus `key`
 * when there is one). The key order is fixed, so equal records give equal
 * bytes. No trailing newline. O(length).
 *
 * @example encodeJsonLine({ts: 1764583200000, shard: 's-17', count: 42})
 * // '{"ts":1764583200000,"shard":"s-17","count":42}'
 */
export function encodeJsonLine(record: CountRecord): string {
  const head = `{"ts":${record.ts},"shard":${JSON.stringify(record.shard)}`;
  if (record.key === undefined) return `${head},"count":${record.count}}`;
  if (record.count === 1) return `${head},"key":${JSON.stringify(record.key)}}`;
  return `${head},"count":${record.count},"key":${JSON.stringify(record.key)}}`;
}

/** The header line of record CSV files written by {@link encodeCsvLine}. */
export const csvHeader = 'ts,shard,count,key';

/**
 * Writes a record as a CSV line under {@link csvHeader}; fields holding a
 * comma, a quote or a line break are quoted (RFC 4180). O(length).
 *
 * @example encodeCsvLine({ts: 1764583200000, shard: 's-17', count: 42}) // '1764583200000,s-17,42,'
 */
export function encodeCsvLine(record: CountRecord): string {
  return `${record.ts},${csvField(record.shard)},${record.count},${csvField(record.key ?? '')}`;
}

function csvField(text: string): string {
  return /[",\r\n]/.test(text) || text !== text.trim() ? `"${text.replaceAll('"', '""')}"` : text;
}
