import { setImmediate as nextTurn } from 'node:timers/promises';
import type { SourceItem } from '../ingest/file-source.js';
import type { RecordSource, SourceStart } from '../ingest/record-source.js';
import { isRejection, type CountRecord } from '../window/count-record.js';
import type { FeedSink } from '../window/feed-sink.js';

/** What a command adds to the feed. */
export interface FeedHooks {
  /** False leaves a record out (review's --since/--until); default keeps every record. */
  readonly keep?: (record: CountRecord) => boolean;
  /** After each batch: back-pressure of the output, the screen's turn. */
  readonly afterBatch?: (batch: SourceItem[]) => Promise<void> | void;
  /** Checked after each batch: true stops reading (an interrupt). */
  readonly stopped?: () => boolean;
}

/**
 * Longest stretch of records, ms, fed without giving the event loop a turn: signals,
 * /metrics, /healthz and the screen's keys are answered within about this while a large
 * batch (a 1 MiB read buffer, a catch-up fetch) is counted and judged.
 */
const sliceMs = 20;

/**
 * The one record feed of `watch`, `review` and `count`: every record of every source goes
 * to the sink (the judging pipeline, or count's per-partition window counting) the same
 * way, with its key, its source partition and its message offset where the source has
 * one; rejections with their line, partition and offset. Partitions the source announces
 * with a backlog are announced to a sink that waits for them, and the sink's idle rule
 * asks the source which partitions are still behind. Between batches, and every 1024 records within one once the slice is used up,
 * the event loop gets a turn; at the same points a sink that judges on another thread and
 * is a backlog behind ({@link FeedSink.room}) is waited for. Resolves when the source ends or `stopped()` says so after
 * a batch (never mid-batch: a batch is counted whole, so offsets stay consistent).
 */
export async function feedRecords(
  source: RecordSource,
  start: SourceStart,
  sink: FeedSink,
  hooks: FeedHooks = {},
): Promise<void> {
  for (const partition of start.backlogPartitions) sink.expectPartition?.(partition);
  sink.setBacklogProbe((partition) => source.backlogged(partition));
  const keep = hooks.keep;
  let sliceStart = performance.now();
  for await (const batch of source.batches()) {
    const length = batch.length;
    for (let at = 0; at < length; at++) {
      const item = batch[at];
      if (isRejection(item)) sink.reject(item.reason, item.line, item.partition, item.offset);
      else if (keep === undefined || keep(item)) {
        sink.record(item.ts, item.shard, item.count, item.key, item.partition ?? 0, item.offset);
      }
      if ((at & 1023) === 1023) {
        const full = sink.room?.();
        if (full !== undefined) {
          await full;
          sliceStart = performance.now();
        } else if (performance.now() - sliceStart > sliceMs) {
          await nextTurn();
          sliceStart = performance.now();
        }
      }
    }
    const full = sink.room?.();
    if (full !== undefined) await full;
    await hooks.afterBatch?.(batch);
    if (hooks.stopped?.() === true) return;
    if (performance.now() - sliceStart > sliceMs) {
      await nextTurn();
      sliceStart = performance.now();
    }
  }
}
