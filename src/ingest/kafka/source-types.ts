import type { KafkaConnectionOptions } from './connection.js';
import type { KafkaSourceListener, PartitionOffset } from './events.js';
import type { ShardFrom } from './message-decoder.js';
import type { WindowGeometry } from './offset-ledger.js';
import type { BackoffPolicy } from './retry.js';
import type { StartPosition } from './start-positions.js';

/** Settings of a {@link KafkaSource}. */
export interface KafkaSourceOptions extends KafkaConnectionOptions {
  /** `--topic`. */
  readonly topic: string;
  /**
   * `--group`: the consumer group whose committed positions a restart
   * resumes from. Without one a fresh group is made per run and `from`
   * decides everything.
   */
  readonly groupId?: string;
  /** `--from`, for partitions without a committed position (default latest). */
  readonly from?: StartPosition;
  /** `--shard-from` (default: the record's `shard` field). */
  readonly shardFrom?: ShardFrom;
  /**
   * The pipeline's windows, to know when a record is fully judged and may be
   * committed past; their lateness also sets the default alignment.
   */
  readonly windows: WindowGeometry & { readonly latenessMs?: number };
  /**
   * While catching up, how far a partition may run ahead of the slowest one
   * with a backlog, in Kafka message time, ms (default half the lateness;
   * Infinity turns alignment off). See {@link PartitionAlignment}.
   */
  readonly alignmentMs?: number;
  /**
   * End once every partition reaches the end offset it had when the source
   * connected (a bounded read: reviews, tests, benchmarks). Default false:
   * read until closed.
   */
  readonly stopAtEnd?: boolean;
  /**
   * End each partition before its first message whose Kafka timestamp is at or after this
   * instant (epoch ms), found by timestamp when connecting; messages from there on are
   * dropped. Implies `stopAtEnd`. With `from: {kind: 'time'}` this reads a time range.
   */
  readonly untilMs?: number;
  /**
   * False: never commit an offset, so reading moves no group's position (a review). The
   * group is then only a name for the consumer's membership. Default true.
   */
  readonly commitOffsets?: boolean;
  /** Connecting at start (default 8 attempts, 250 ms doubling to 8 s: about 30 s). */
  readonly connectRetry?: BackoffPolicy;
  /** Making a new consumer after a crash (default 10 attempts, 500 ms doubling to 15 s). */
  readonly consumerRestart?: BackoffPolicy;
  /** The client's own retries of a failed request before the consumer crashes (default 5). */
  readonly consumerRetries?: number;
  /** How often judged positions are committed, ms (default 1000); always on close. */
  readonly commitIntervalMs?: number;
  /** Longest wait of a fetch for new messages, ms (default 500). */
  readonly maxWaitTimeMs?: number;
  /** Fetch size per partition, bytes (default 4 MiB). */
  readonly maxBytesPerPartition?: number;
  /** Fetch size per request, bytes (default 16 MiB). */
  readonly maxBytes?: number;
  /** Group session timeout, ms (default 30000). */
  readonly sessionTimeoutMs?: number;
  /** Group heartbeat interval, ms (default 3000, or a third of a shorter session timeout). */
  readonly heartbeatIntervalMs?: number;
  /** Receives the source's events from the start (see also {@link KafkaSource.on}). */
  readonly onEvent?: KafkaSourceListener;
}

/** What {@link KafkaSource.connect} found. */
export interface KafkaSourceInfo {
  readonly topic: string;
  readonly groupId: string;
  /** The topic's partition count: the shard universe size for `--shard-from partition`. */
  readonly partitions: number;
  /**
   * End of the last window a previous run on this group judged, or null. The
   * pipeline must not emit windows ending at or before it again (see the
   * module notes on sliding windows).
   */
  readonly judgedThrough: number | null;
  /** Where each partition starts. */
  readonly startOffsets: readonly PartitionOffset[];
  /**
   * Partitions with records to read at start (a backlog): event time waits for each of
   * them before closing windows, so a partition fetched late is not judged as late.
   */
  readonly backlogPartitions: readonly number[];
}

/** Running counts of the source. */
export interface KafkaSourceStats {
  /** Messages decoded (each gives records or one rejection). */
  readonly messages: number;
  /** Redelivered messages dropped because they were already counted. */
  readonly redeliveriesSkipped: number;
  /** Replayed records dropped because a previous run judged all their windows. */
  readonly alreadyJudgedSkipped: number;
  /** New consumers made after crashes. */
  readonly consumerRecreations: number;
  /** Commits confirmed by the group coordinator. */
  readonly commits: number;
}

/** Connecting at start: about 30 s in all. */
export const defaultConnectRetry: BackoffPolicy = {
  attempts: 8,
  initialDelayMs: 250,
  maxDelayMs: 8000,
};
/** Making a new consumer after a crash. */
export const defaultConsumerRestart: BackoffPolicy = {
  attempts: 10,
  initialDelayMs: 500,
  maxDelayMs: 15_000,
};
