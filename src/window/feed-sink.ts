import type { RejectionReason } from './count-record.js';

/**
 * What the one record feed (src/cli/record-feed.ts) writes into: the judging pipeline of
 * `watch` and `review`, and the per-partition window counting of `shardwise count`
 * (src/partials/partial-count-sink.ts). Every record and rejection of a source reaches
 * either the same way, in source order within each partition.
 */
export interface FeedSink {
  /**
   * A validated record with its source partition (0 for unpartitioned sources) and, where
   * the source gives one, the offset of its message.
   */
  record(
    ts: number,
    shard: string,
    count: number,
    key: string | undefined,
    partition: number,
    offset?: number,
  ): void;
  /** A rejected record: its line where the source has lines, its partition and offset where it has them. */
  reject(reason: RejectionReason, line?: number, partition?: number, offset?: number): void;
  /**
   * Tells the sink which partitions still have records waiting at the source (behind, not
   * idle); asked by its idle rule.
   */
  setBacklogProbe(backlogged: (partition: number) => boolean): void;
  /**
   * A partition announced with a backlog at start, for sinks whose event time is shared by
   * all partitions (the pipeline holds windows open until it reports); a sink keeping a
   * watermark per partition has nothing to wait for and leaves it out.
   */
  expectPartition?(partition: number): void;
  /**
   * Back-pressure of a sink that finishes work later (windows judged on another thread):
   * a promise the feed awaits before counting more, or undefined when there is room.
   */
  room?(): Promise<void> | undefined;
}
