import type { RejectionReason } from '../window/count-record.js';
import type { FeedSink } from '../window/feed-sink.js';
import type { PartitionPart } from './partial-summary.js';
import {
  PartitionCounter,
  type ClosedPart,
  type PartitionCounterOptions,
} from './partition-counter.js';

/** Settings of a {@link PartialCountSink}. */
export interface PartialCountSinkOptions extends PartitionCounterOptions {
  /**
   * A partition that is not behind and has brought nothing for this long (wall time, ms)
   * closes its windows on the newest watermark of the other partitions held.
   */
  readonly idleMs: number;
}

/** One closed window's parts, one per partition that closed it. */
export interface ClosedWindowParts {
  readonly start: number;
  readonly end: number;
  readonly parts: readonly PartitionPart[];
}

/** What {@link PartialCountSink.closeDue} hands out. */
export interface DueParts {
  /** How many times partitions were revoked before these were made (the summaries' epoch). */
  readonly generation: number;
  /** Closed windows in start order. */
  readonly windows: readonly ClosedWindowParts[];
  /** Per partition that closed windows: the end of its last closed window. */
  readonly judged: readonly { readonly partition: number; readonly through: number }[];
}

/**
 * The record sink of `shardwise count`, fed by the same record feed as the judging
 * pipeline: one {@link PartitionCounter} per partition held, each on its own watermark.
 * A partition is counted only between {@link startPartition} (from where the source
 * reads it, and through which window its windows were published before) and
 * {@link revokeAll}; records of a partition not started are dropped and counted in
 * {@link unowned}. {@link closeDue} hands out what is due, to publish; once the
 * publication is acknowledged, the source may be marked judged through each `judged` end
 * while {@link isCurrent} still holds for the generation. Pure: the clock comes in.
 */
export class PartialCountSink implements FeedSink {
  private readonly options: PartialCountSinkOptions;
  private readonly counters = new Map<number, PartitionCounter>();
  private readonly lastActive = new Map<number, number>();
  private delivered: boolean[] = [];
  private backlogged: (partition: number) => boolean = () => false;
  private revocations = 0;
  private dropped = 0;

  constructor(options: PartialCountSinkOptions) {
    if (!Number.isSafeInteger(options.idleMs) || options.idleMs <= 0) {
      throw new RangeError(`idle time ${options.idleMs} ms is not a whole number above zero`);
    }
    this.options = options;
  }

  /** Records and rejections dropped because their partition was not started (stale after a join). */
  get unowned(): number {
    return this.dropped;
  }

  /** Partitions being counted, in order. */
  get partitions(): number[] {
    return [...this.counters.keys()].sort((a, b) => a - b);
  }

  /** The counter of a partition held, for its running figures. */
  counterOf(partition: number): PartitionCounter | undefined {
    return this.counters.get(partition);
  }

  /**
   * Starts counting `partition` afresh: read from `offset`, its windows ending at or
   * before `publishedThrough` already published (-Infinity: none).
   */
  startPartition(partition: number, offset: number, publishedThrough: number, now: number): void {
    this.counters.set(
      partition,
      new PartitionCounter(partition, this.options, offset, publishedThrough),
    );
    this.lastActive.set(partition, now);
  }

  /** Every partition was taken back (a join): nothing counted so far is published. */
  revokeAll(): void {
    this.revocations++;
    this.counters.clear();
    this.lastActive.clear();
    this.delivered = [];
  }

  /** True while no revocation came after `generation` was handed out. */
  isCurrent(generation: number): boolean {
    return generation === this.revocations;
  }

  setBacklogProbe(backlogged: (partition: number) => boolean): void {
    this.backlogged = backlogged;
  }

  record(
    ts: number,
    shard: string,
    count: number,
    _key: string | undefined,
    partition: number,
    offset?: number,
  ): void {
    const counter = this.counterAt(partition, offset);
    if (counter === undefined) return;
    counter.record(ts, shard, count);
    if (offset !== undefined) counter.processed(offset);
  }

  reject(reason: RejectionReason, _line?: number, partition = 0, offset?: number): void {
    const counter = this.counterAt(partition, offset);
    if (counter === undefined) return;
    counter.reject(reason);
    if (offset !== undefined) counter.processed(offset);
  }

  /**
   * Closes every window due on each partition (an idle one on the newest watermark of
   * those held) and hands out their parts.
   */
  closeDue(now: number): DueParts {
    for (let partition = 0; partition < this.delivered.length; partition++) {
      if (this.delivered[partition] === true) this.lastActive.set(partition, now);
    }
    this.delivered = [];
    let newest = Number.NEGATIVE_INFINITY;
    for (const counter of this.counters.values()) newest = Math.max(newest, counter.watermark);
    const byWindow = new Map<number, PartitionPart[]>();
    const judged: { partition: number; through: number }[] = [];
    for (const [partition, counter] of this.counters) {
      const idle =
        !this.backlogged(partition) &&
        now - (this.lastActive.get(partition) ?? now) >= this.options.idleMs;
      const parts = counter.closeDue(idle ? newest : Number.NEGATIVE_INFINITY);
      if (parts.length === 0) continue;
      for (const closed of parts) {
        const list = byWindow.get(closed.start) ?? [];
        list.push(partOf(closed));
        byWindow.set(closed.start, list);
      }
      judged.push({ partition, through: counter.closedThrough });
    }
    const windows = [...byWindow.entries()]
      .sort(([a], [b]) => a - b)
      .map(([start, parts]) => ({ start, end: start + this.options.windowMs, parts }));
    return { generation: this.revocations, windows, judged };
  }

  private counterAt(partition: number, offset: number | undefined): PartitionCounter | undefined {
    const counter = this.counters.get(partition);
    if (counter === undefined) {
      this.dropped++;
      return undefined;
    }
    if (offset !== undefined) counter.offset = offset;
    this.delivered[partition] = true;
    return counter;
  }
}

/** A closed part as the summary carries it: the window is the summary's. */
function partOf({ start: _start, end: _end, ...part }: ClosedPart): PartitionPart {
  return part;
}
