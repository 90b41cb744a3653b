/**
 * Offset bookkeeping for a Kafka source whose records are counted into
 * event-time windows: which messages were already counted (so a redelivery
 * is not counted twice), and how far each partition may be committed so that
 * a restart replays exactly the records of windows not yet judged.
 *
 * No Kafka client here: plain numbers, testable without a broker.
 */

/** The windows records are counted into; the same numbers as the pipeline's EventTimeWindows. */
export interface WindowGeometry {
  /** Window length, ms. */
  readonly windowMs: number;
  /** Distance between window starts, ms; dividing the length (default: the length, tumbling). */
  readonly hopMs?: number;
}

/**
 * One partition's ledger.
 *
 * Dedupe. Kafka hands a consumer each partition's messages in increasing
 * offset order, and every redelivery (after a rebalance, a reconnect, a
 * consumer restart) starts again from a committed offset, which this ledger
 * never lets exceed the highest offset processed plus one, and again goes up
 * in order. So the redelivered messages are exactly those at or below the
 * highest offset processed: one number per partition is enough to drop them,
 * however long the run. (A seek backwards or an offset reset by an operator
 * while running would also be replays, and are dropped the same way.)
 *
 * Commit position. Each processed message is released once every window it
 * was counted in has been judged: at the end of its last covering window
 * (see {@link OffsetLedger.releaseOf}). The committable offset is the lowest
 * offset still unreleased, or the highest processed plus one when none is.
 * Held messages are kept as runs `(first offset, release)` with strictly
 * increasing releases: a message whose release is at or below the last
 * run's joins that run, because it cannot be committed past before the run's
 * first offset anyway. So the memory is one run per distinct pending window
 * end, not one entry per message.
 */
export class PartitionLedger {
  /** Highest offset processed; one below the start before any. */
  highestProcessed = -1;
  private runOffsets: number[] = [];
  private runReleases: number[] = [];
  private head = 0;

  /**
   * Starts the partition at `offset`: offsets below it count as processed,
   * so a fetch from lower down is dropped like a redelivery. Call before any
   * message is held.
   */
  startAt(offset: number): void {
    this.highestProcessed = offset - 1;
  }

  /** True when `offset` was processed before (a redelivery). O(1). */
  isDuplicate(offset: number): boolean {
    return offset <= this.highestProcessed;
  }

  /**
   * Records that the message at `offset` (above every offset so far) was
   * counted and may be committed past once windows through `release` are
   * judged; `release` -Infinity means at once (a rejected message). O(1).
   */
  hold(offset: number, release: number, judgedThrough: number): void {
    this.highestProcessed = offset;
    if (release <= judgedThrough) return;
    const last = this.runReleases.length - 1;
    if (last >= this.head && release <= this.runReleases[last]) return;
    this.runOffsets.push(offset);
    this.runReleases.push(release);
  }

  /** Runs still held: open windows this partition waits for. */
  get heldRuns(): number {
    return this.runReleases.length - this.head;
  }

  /**
   * The offset to commit (the next one a restart reads) when every window
   * ending at or before `judgedThrough` is judged: the first held message,
   * else the one after the highest processed (the start, before any).
   * Drops the released runs. O(released runs).
   */
  commitOffset(judgedThrough: number): number {
    while (this.head < this.runReleases.length && this.runReleases[this.head] <= judgedThrough) {
      this.head++;
    }
    if (this.head > 64 && this.head * 2 > this.runReleases.length) {
      this.runOffsets = this.runOffsets.slice(this.head);
      this.runReleases = this.runReleases.slice(this.head);
      this.head = 0;
    }
    if (this.head < this.runReleases.length) return this.runOffsets[this.head];
    return this.highestProcessed + 1;
  }
}

/** The ledgers of all partitions of a topic, and the judged watermark they share. */
export class OffsetLedger {
  /** Window length, ms. */
  readonly windowMs: number;
  /** Hop, ms. */
  readonly hopMs: number;
  private judged: number;
  private readonly partitions = new Map<number, PartitionLedger>();

  /**
   * @param geometry the pipeline's windows
   * @param judgedThrough end of the last window a previous run judged (from the commit metadata), or -Infinity
   */
  constructor(geometry: WindowGeometry, judgedThrough = Number.NEGATIVE_INFINITY) {
    const windowMs = geometry.windowMs;
    const hopMs = geometry.hopMs ?? windowMs;
    if (!Number.isSafeInteger(windowMs) || windowMs <= 0) {
      throw new RangeError(`window length ${windowMs} ms is not a whole number above zero`);
    }
    if (!Number.isSafeInteger(hopMs) || hopMs <= 0 || windowMs % hopMs !== 0) {
      throw new RangeError(`hop ${hopMs} ms does not divide the window length ${windowMs} ms`);
    }
    this.windowMs = windowMs;
    this.hopMs = hopMs;
    this.judged = judgedThrough;
  }

  /** End of the last window judged, by this run or (on resume) by the previous one. */
  get judgedThrough(): number {
    return this.judged;
  }

  /**
   * End of the last window that counts a record at `ts`: windows are aligned
   * to multiples of the hop, and the last one covering `ts` starts at
   * `floor(ts / hop) * hop`. A record is fully judged once windows through
   * this end are. O(1).
   *
   * @example new OffsetLedger({windowMs: 10_000}).releaseOf(12_345) // 20000
   */
  releaseOf(ts: number): number {
    return Math.floor(ts / this.hopMs) * this.hopMs + this.windowMs;
  }

  /** The ledger of one partition, made on first use. */
  partition(partition: number): PartitionLedger {
    let ledger = this.partitions.get(partition);
    if (ledger === undefined) {
      ledger = new PartitionLedger();
      this.partitions.set(partition, ledger);
    }
    return ledger;
  }

  /** Every window ending at or before `windowEnd` is closed and judged; never moves back. */
  markJudgedUpTo(windowEnd: number): void {
    if (windowEnd > this.judged) this.judged = windowEnd;
  }

  /** Offset to commit per partition known (started or seen), in partition order. */
  commitOffsets(): { partition: number; offset: number }[] {
    const offsets: { partition: number; offset: number }[] = [];
    for (const [partition, ledger] of this.partitions) {
      offsets.push({ partition, offset: ledger.commitOffset(this.judged) });
    }
    return offsets.sort((a, b) => a.partition - b.partition);
  }
}

const metadataPattern = /^shardwise judged-through=(\d{1,16})$/;

/**
 * The commit metadata string recording how far a run judged, so the next
 * run on the group knows which replayed records were already counted in a
 * judged window. Kafka keeps it beside each committed offset.
 *
 * @example commitMetadata(1764583210000) // 'shardwise judged-through=1764583210000'
 */
export function commitMetadata(judgedThrough: number): string | null {
  return Number.isFinite(judgedThrough) && judgedThrough >= 0
    ? `shardwise judged-through=${judgedThrough}`
    : null;
}

/** Reads {@link commitMetadata}; -Infinity for none or for another program's metadata. */
export function judgedThroughFromMetadata(metadata: string | null | undefined): number {
  const match = metadata === null || metadata === undefined ? null : metadataPattern.exec(metadata);
  return match === null ? Number.NEGATIVE_INFINITY : Number(match[1]);
}
