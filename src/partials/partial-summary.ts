import { rejectionReasons, type RejectionReason } from '../window/count-record.js';
import { ShardwiseError } from '../errors/shardwise-error.js';

/**
 * The partial summary a counting instance (`shardwise count`) publishes to the summary
 * topic when a window closes on some of the source partitions it owns, and the judge
 * (`shardwise watch --merge`) reads. One JSON object per Kafka message:
 *
 * ```
 * {"partial":1,"instance":"c0ffee-…","epoch":2,"topic":"requests","sourcePartitions":12,
 *  "windowMs":10000,"latenessMs":2000,"shardFrom":"field","start":1764583200000,"end":1764583210000,
 *  "parts":[{"partition":3,"from":120,"to":480,"records":55,"late":0,"rejected":{},"counts":{"s-1":4}}]}
 * ```
 *
 * Each part is one source partition's whole contribution to the window: every record of
 * that partition in the window, read from offset `from` (where the instance started the
 * partition: nothing of an unpublished window lies below it) through `to` (the last
 * offset read when the window closed). A part is never split, so two parts for the same
 * window and partition (a rebalance made the window twice) count the same records and
 * only one may be added. Counts are sparse: shards with no load are left out.
 */

/** The format version this build writes and reads. */
export const partialSummaryVersion = 1;

/** One source partition's counts for one window. */
export interface PartitionPart {
  readonly partition: number;
  /** First offset of the stretch the instance read (inclusive). */
  readonly from: number;
  /** Last offset read when the window closed (inclusive); from - 1 when none was. */
  readonly to: number;
  /** Records counted in the window. */
  readonly records: number;
  /** Units of load that arrived after this partition's window had closed, since its previous part. */
  readonly late: number;
  /** Records rejected on this partition since its previous part, by reason. */
  readonly rejected: Readonly<Partial<Record<RejectionReason, number>>>;
  /** Load per shard id, shards with load only. */
  readonly counts: Readonly<Record<string, number>>;
}

/** One partial summary message. */
export interface PartialSummary {
  readonly partial: typeof partialSummaryVersion;
  /** The counting instance (a fresh id per process). */
  readonly instance: string;
  /** How many times the instance had joined its group when the parts were made. */
  readonly epoch: number;
  /** The source topic counted. */
  readonly topic: string;
  /** The source topic's partition count: a window is complete with a part for each. */
  readonly sourcePartitions: number;
  readonly windowMs: number;
  readonly latenessMs: number;
  /** Where shards came from (`--shard-from` as written). */
  readonly shardFrom: string;
  /** Window start, epoch ms. */
  readonly start: number;
  /** Window end, epoch ms (start + windowMs). */
  readonly end: number;
  readonly parts: readonly PartitionPart[];
}

/** The summary as one JSON text (the Kafka message value). */
export function encodePartialSummary(summary: PartialSummary): string {
  return JSON.stringify(summary);
}

/** Why a message on the summary topic is not a partial summary this build can merge. */
export class PartialSummaryError extends ShardwiseError {}

/**
 * Reads and checks one summary message. Throws {@link PartialSummaryError} naming the
 * first fault (not JSON, another version, a field missing or of the wrong type, parts
 * that do not fit the window). O(length of the text).
 */
export function decodePartialSummary(text: string): PartialSummary {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch {
    throw new PartialSummaryError('not JSON');
  }
  if (typeof value !== 'object' || value === null || Array.isArray(value)) {
    throw new PartialSummaryError('not a JSON object');
  }
  const object = value as Record<string, unknown>;
  if (object.partial !== partialSummaryVersion) {
    throw new PartialSummaryError(`partial version ${String(object.partial)} is not 1`);
  }
  const instance = textField(object, 'instance');
  const topic = textField(object, 'topic');
  const shardFrom = textField(object, 'shardFrom');
  const epoch = wholeField(object, 'epoch', 0);
  const sourcePartitions = wholeField(object, 'sourcePartitions', 1);
  const windowMs = wholeField(object, 'windowMs', 1);
  const latenessMs = wholeField(object, 'latenessMs', 0);
  const start = wholeField(object, 'start', 0);
  const end = wholeField(object, 'end', 0);
  if (end !== start + windowMs || start % windowMs !== 0) {
    throw new PartialSummaryError(
      `window ${start}..${end} is not one aligned window of ${windowMs} ms`,
    );
  }
  if (!Array.isArray(object.parts)) throw new PartialSummaryError('parts is not an array');
  const seen = new Set<number>();
  const parts = object.parts.map((raw: unknown) => {
    const part = readPart(raw, sourcePartitions);
    if (seen.has(part.partition)) {
      throw new PartialSummaryError(`partition ${part.partition} appears twice in one summary`);
    }
    seen.add(part.partition);
    return part;
  });
  return {
    partial: partialSummaryVersion,
    instance,
    epoch,
    topic,
    sourcePartitions,
    windowMs,
    latenessMs,
    shardFrom,
    start,
    end,
    parts,
  };
}

function readPart(raw: unknown, sourcePartitions: number): PartitionPart {
  if (typeof raw !== 'object' || raw === null || Array.isArray(raw)) {
    throw new PartialSummaryError('a part is not a JSON object');
  }
  const object = raw as Record<string, unknown>;
  const partition = wholeField(object, 'partition', 0);
  if (partition >= sourcePartitions) {
    throw new PartialSummaryError(
      `partition ${partition} is outside the ${sourcePartitions} partitions of the source`,
    );
  }
  const from = wholeField(object, 'from', 0);
  const to = wholeField(object, 'to', -1);
  if (to < from - 1) throw new PartialSummaryError(`offset range ${from}..${to} runs backwards`);
  const records = wholeField(object, 'records', 0);
  const late = wholeField(object, 'late', 0);
  const counts = countsField(object, 'counts');
  const rejectedRaw = countsField(object, 'rejected');
  const rejected: Partial<Record<RejectionReason, number>> = {};
  for (const [reason, count] of Object.entries(rejectedRaw)) {
    if (!(rejectionReasons as readonly string[]).includes(reason)) {
      throw new PartialSummaryError(`rejection reason ${JSON.stringify(reason)} is not known`);
    }
    rejected[reason as RejectionReason] = count;
  }
  return { partition, from, to, records, late, rejected, counts };
}

function textField(object: Record<string, unknown>, name: string): string {
  const value = object[name];
  if (typeof value !== 'string' || value === '') {
    throw new PartialSummaryError(`${name} is not a non-empty string`);
  }
  return value;
}

function wholeField(object: Record<string, unknown>, name: string, least: number): number {
  const value = object[name];
  if (typeof value !== 'number' || !Number.isSafeInteger(value) || value < least) {
    throw new PartialSummaryError(`${name} is not a whole number of at least ${least}`);
  }
  return value;
}

function countsField(object: Record<string, unknown>, name: string): Record<string, number> {
  const value = object[name];
  if (typeof value !== 'object' || value === null || Array.isArray(value)) {
    throw new PartialSummaryError(`${name} is not a JSON object`);
  }
  const entries = Object.entries(value as Record<string, unknown>);
  for (const [key, count] of entries) {
    if (typeof count !== 'number' || !Number.isSafeInteger(count) || count < 0) {
      throw new PartialSummaryError(`${name}.${key} is not a non-negative whole number`);
    }
  }
  // Keys are shard ids from the wire: fromEntries defines each one as an own property, where
  // assigning `__proto__` would set the prototype and lose its count.
  return Object.fromEntries(entries) as Record<string, number>;
}
