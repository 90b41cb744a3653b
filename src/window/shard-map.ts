import { splitCsvRecord } from './csv-record.js';
import { longestShardId } from './count-record.js';
import { UsageError } from '../errors/usage-error.js';

/** Shard ids and their relative weights, in the order the map lists them. */
export interface ShardMap {
  readonly ids: readonly string[];
  readonly weights: readonly number[];
}

const option = '--shard-map';

/**
 * Parses the text of a shard map file: CSV with a `shard,weight` header, or a
 * JSON object `{"s-0": 1.0, ...}`. Weights are relative capacities or
 * hash-range sizes and must be finite and above zero. The format follows the
 * file extension (.csv / .json) and otherwise the first character (`{` means
 * JSON). Every mistake throws a {@link UsageError} naming the file and the bad
 * entry; nothing is silently skipped, because a wrong share would bias every
 * verdict. O(size of the file).
 *
 * @param content the whole file as text
 * @param fileName the path as the user gave it, quoted in errors
 * @param maxShards more entries than this is an error (`--max-shards`)
 */
export function parseShardMap(content: string, fileName: string, maxShards: number): ShardMap {
  const text = content.charCodeAt(0) === 0xfeff ? content.slice(1) : content;
  const lower = fileName.toLowerCase();
  const looksJson = lower.endsWith('.json')
    ? true
    : lower.endsWith('.csv')
      ? false
      : text.trimStart().startsWith('{');
  const map = looksJson ? parseJsonMap(text, fileName) : parseCsvMap(text, fileName, maxShards);
  if (map.ids.length === 0) throw new UsageError(option, fileName, 'lists no shards');
  if (map.ids.length > maxShards) {
    throw new UsageError(
      option,
      fileName,
      `lists ${map.ids.length} shards, more than --max-shards ${maxShards}`,
    );
  }
  return map;
}

function parseCsvMap(text: string, fileName: string, maxShards: number): ShardMap {
  const ids: string[] = [];
  const weights: number[] = [];
  const firstLine = new Map<string, number>();
  const lines = text.split('\n');
  let sawHeader = false;
  for (let index = 0; index < lines.length; index++) {
    const raw = lines[index].endsWith('\r') ? lines[index].slice(0, -1) : lines[index];
    if (raw.trim() === '') continue;
    const where = `line ${index + 1} ${JSON.stringify(raw.length > 80 ? raw.slice(0, 80) + '...' : raw)}`;
    const fields = splitCsvRecord(raw);
    if (!sawHeader) {
      const header = fields?.map((field) => field.toLowerCase());
      if (header?.length !== 2 || header[0] !== 'shard' || header[1] !== 'weight') {
        throw new UsageError(
          option,
          fileName,
          `${where}: the first line must be the header shard,weight`,
        );
      }
      sawHeader = true;
      continue;
    }
    if (fields === null || fields.length !== 2) {
      throw new UsageError(option, fileName, `${where}: expected two fields, shard,weight`);
    }
    const [id, weightText] = fields;
    checkId(id, where, fileName);
    const earlier = firstLine.get(id);
    if (earlier !== undefined) {
      throw new UsageError(
        option,
        fileName,
        `${where}: shard "${id}" is listed twice (first on line ${earlier})`,
      );
    }
    firstLine.set(id, index + 1);
    weights.push(checkWeight(parseDecimal(weightText), weightText, where, fileName));
    ids.push(id);
    if (ids.length > maxShards) break;
  }
  return { ids, weights };
}

function parseJsonMap(text: string, fileName: string): ShardMap {
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch (error) {
    throw new UsageError(option, fileName, `is not valid JSON (${(error as Error).message})`, {
      cause: error,
    });
  }
  if (parsed === null || typeof parsed !== 'object' || Array.isArray(parsed)) {
    throw new UsageError(option, fileName, 'must be a JSON object of shard id to weight');
  }
  const entries = parsed as Record<string, unknown>;
  for (const [id, weight] of Object.entries(entries)) {
    const where = `entry ${JSON.stringify(id.length > 80 ? id.slice(0, 80) + '...' : id)}`;
    checkId(id, where, fileName);
    const shown =
      typeof weight === 'string'
        ? JSON.stringify(weight)
        : (JSON.stringify(weight) ?? String(weight));
    checkWeight(typeof weight === 'number' ? weight : Number.NaN, shown, where, fileName);
  }
  // JSON.parse keeps only the last of repeated keys and puts integer-like keys
  // first; the literal keys in file order catch repeats and keep the user's
  // order. Every value is a number by now, so every string literal is a key.
  const ids: string[] = [];
  const seen = new Set<string>();
  for (const literal of text.match(/"(?:[^"\\]|\\.)*"/g) ?? []) {
    const id = JSON.parse(literal) as string;
    if (seen.has(id)) throw new UsageError(option, fileName, `shard "${id}" is listed twice`);
    seen.add(id);
    ids.push(id);
  }
  return { ids, weights: ids.map((id) => entries[id] as number) };
}

function checkId(id: string, where: string, fileName: string): void {
  if (id === '') throw new UsageError(option, fileName, `${where}: the shard id is empty`);
  if (id.length > longestShardId) {
    throw new UsageError(
      option,
      fileName,
      `${where}: the shard id is longer than ${longestShardId} characters`,
    );
  }
}

function checkWeight(weight: number, shown: string, where: string, fileName: string): number {
  if (Number.isNaN(weight)) {
    throw new UsageError(option, fileName, `${where}: weight ${shown} is not a number`);
  }
  if (!Number.isFinite(weight)) {
    throw new UsageError(option, fileName, `${where}: weight ${shown} is not a finite number`);
  }
  if (weight <= 0) {
    throw new UsageError(option, fileName, `${where}: weight ${shown} must be above zero`);
  }
  return weight;
}

/**
 * Reads a plain decimal number. Number() alone would also take '', '0x10' and
 * 'Infinity', none of which a person means as a weight.
 */
function parseDecimal(text: string): number {
  return /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text) ? Number(text) : Number.NaN;
}
