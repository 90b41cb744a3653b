/**
 * Load reported for one shard at one instant after validation: a count report,
 * one entry of a count batch, or a request event (count 1). `shard` is the id
 * as the producer wrote it; only the shard universe turns it into an index.
 */
export interface CountRecord {
  /** Event time, epoch milliseconds. */
  readonly ts: number;
  /** Shard id, untrusted text, at most {@link longestShardId} characters. */
  readonly shard: string;
  /** Units of load (requests), a non-negative whole number. */
  readonly count: number;
  /** The request's key, kept from request events for key-level drill-down. */
  readonly key?: string;
  /**
   * The source partition it came from (a Kafka partition); absent means 0, the only
   * partition of a file, standard input or a scenario. Event time is kept per partition.
   */
  readonly partition?: number;
  /**
   * The offset of the Kafka message it came from, set by sources whose consumer needs it
   * downstream (the group source of `shardwise count`, whose summaries name offset ranges).
   */
  readonly offset?: number;
}

/**
 * Why a record was not counted. The strings are stable: they become metric
 * labels and report headings, so never reword one.
 *
 * "shard id too long" is this project's own addition to the reasons listed in
 * docs/formats.md: an id over {@link longestShardId} characters is far more
 * likely garbage than a shard, and naming it apart from "wrong type" tells the
 * operator which producer field to look at.
 *
 * "invalid UTF-8" is another: a shard id or key whose bytes are not well-formed
 * UTF-8, or whose JSON escapes leave a lone surrogate (`"\ud800"`). Decoders
 * would turn such bytes into U+FFFD and merge ids that differ only in them.
 */
export type RejectionReason =
  | 'not JSON'
  | 'wrong type'
  | 'negative count'
  | 'non-integer count'
  | 'missing shard'
  | 'shard id too long'
  | 'invalid UTF-8'
  | 'outside universe'
  | 'bad timestamp'
  | 'too late'
  | 'too many shards'
  | 'line too long'
  | 'too far ahead';

/** Every rejection reason, in the order reports list them. */
export const rejectionReasons: readonly RejectionReason[] = [
  'not JSON',
  'wrong type',
  'negative count',
  'non-integer count',
  'missing shard',
  'shard id too long',
  'invalid UTF-8',
  'outside universe',
  'bad timestamp',
  'too late',
  'too many shards',
  'line too long',
  'too far ahead',
];

/**
 * Shard ids longer than this are rejected: ids are untrusted text and each
 * new one is kept for the whole run by an undeclared universe.
 */
export const longestShardId = 200;

/** A record that failed validation, with where it came from. */
export interface Rejection {
  readonly reason: RejectionReason;
  /** 1-based line number in the input file, when the source has lines. */
  readonly line?: number;
  /** The source partition, as {@link CountRecord.partition}; set where a sink needs it. */
  readonly partition?: number;
  /** The message offset, as {@link CountRecord.offset}. */
  readonly offset?: number;
}

/**
 * Tells a rejection from a record in a source's output stream.
 */
export function isRejection(item: CountRecord | Rejection): item is Rejection {
  return (item as Rejection).reason !== undefined;
}
