import type { RejectionReason } from '../window/count-record.js';
import type { PartitionPart } from './partial-summary.js';

/** One partition's part of a closed window, with the window it belongs to. */
export interface ClosedPart extends PartitionPart {
  /** Window start, epoch ms. */
  readonly start: number;
  /** Window end, epoch ms. */
  readonly end: number;
}

/** Settings of a {@link PartitionCounter}. */
export interface PartitionCounterOptions {
  /** Tumbling window length, ms. */
  readonly windowMs: number;
  /** How far this partition's watermark trails its newest timestamp, ms. */
  readonly latenessMs: number;
  /** Most all-zero windows emitted for one quiet stretch (default 10000). */
  readonly maxQuietWindows?: number;
}

interface OpenPart {
  readonly counts: Map<string, number>;
  records: number;
}

/**
 * Counts one source partition into tumbling event-time windows with a watermark of its
 * own (the partition's newest timestamp minus the lateness), so where a window closes and
 * which records are too late depend only on the partition's messages from the instance's
 * start offset on, not on how partitions were spread over instances or interleaved in
 * fetches. Another instance that takes the partition over and replays it from the
 * committed offset closes each window at the same record and counts it the same.
 *
 * Fed by `shardwise count`'s sink (src/partials/partial-count-sink.ts): set {@link offset}
 * to the record's message offset before counting it and call {@link processed} after.
 * {@link closeDue} hands out the parts of windows the watermark has passed, every window
 * from the first one on included, empty or not, so the judge can tell "no load" from "not
 * reported". How far the source may be committed once they are published is the source's
 * business: the lowest offset of a message in a window still open (its offset ledger).
 * Pure: no clock, no I/O. O(1) per record plus O(shards) per closed window.
 */
export class PartitionCounter {
  readonly partition: number;
  /** Offset of the message being decoded. */
  offset = 0;
  private readonly windowMs: number;
  private readonly latenessMs: number;
  private readonly maxQuietWindows: number;
  private readonly startOffset: number;
  private readonly open = new Map<number, OpenPart>();
  private newest = Number.NEGATIVE_INFINITY;
  /** End of the last window closed (published or handed out): nothing at or before it is counted. */
  private closedEnd: number;
  private lastProcessed: number;
  private pendingLate = 0;
  private pendingRejected: Partial<Record<RejectionReason, number>> = {};
  private skippedQuiet = 0;
  private readonly resumedThrough: number;
  private dropped = 0;

  /**
   * @param partition the source partition
   * @param options window length and lateness
   * @param startOffset where reading starts (the committed offset, or the `--from` start)
   * @param publishedThrough end of the last window already published for this partition
   *   (from the commit metadata), or -Infinity; windows ending at or before it are not made
   *   again and records in them are dropped as already counted
   */
  constructor(
    partition: number,
    options: PartitionCounterOptions,
    startOffset: number,
    publishedThrough = Number.NEGATIVE_INFINITY,
  ) {
    if (!Number.isSafeInteger(options.windowMs) || options.windowMs <= 0) {
      throw new RangeError(`window length ${options.windowMs} ms is not a whole number above zero`);
    }
    if (!Number.isSafeInteger(options.latenessMs) || options.latenessMs < 0) {
      throw new RangeError(`lateness ${options.latenessMs} ms is not a whole number of at least 0`);
    }
    this.partition = partition;
    this.windowMs = options.windowMs;
    this.latenessMs = options.latenessMs;
    this.maxQuietWindows = options.maxQuietWindows ?? 10_000;
    this.startOffset = startOffset;
    this.lastProcessed = startOffset - 1;
    this.closedEnd = publishedThrough;
    this.resumedThrough = publishedThrough;
  }

  /** Replayed records dropped because their window was published before this start. */
  get alreadyCounted(): number {
    return this.dropped;
  }

  /** End of the last window handed out (or published before the start). */
  get closedThrough(): number {
    return this.closedEnd;
  }

  /** Highest offset processed; startOffset - 1 before any. */
  get highestProcessed(): number {
    return this.lastProcessed;
  }

  /** Windows counting records that have not closed. */
  get openWindows(): number {
    return this.open.size;
  }

  /** All-zero windows not emitted because a quiet stretch exceeded the cap. */
  get quietWindowsSkipped(): number {
    return this.skippedQuiet;
  }

  /** Counts one record of the message at {@link offset}. */
  record(ts: number, shard: string, count: number): void {
    const start = Math.floor(ts / this.windowMs) * this.windowMs;
    if (start + this.windowMs <= this.closedEnd) {
      // Counted (or found too late) by whoever published that window.
      if (start + this.windowMs <= this.resumedThrough) {
        this.dropped++;
        return;
      }
      this.pendingLate += count;
      this.tallyRejection('too late');
      return;
    }
    if (ts > this.newest) this.newest = ts;
    let part = this.open.get(start);
    if (part === undefined) {
      part = { counts: new Map(), records: 0 };
      this.open.set(start, part);
    }
    part.counts.set(shard, (part.counts.get(shard) ?? 0) + count);
    part.records++;
  }

  /** Counts one rejected record of the message at {@link offset}. */
  reject(reason: RejectionReason): void {
    this.tallyRejection(reason);
  }

  /** The message at `offset` is decoded; offsets only rise. */
  processed(offset: number): void {
    if (offset > this.lastProcessed) this.lastProcessed = offset;
  }

  /** The partition's watermark: newest timestamp minus the lateness. */
  get watermark(): number {
    return this.newest - this.latenessMs;
  }

  /**
   * Closes, in start order, every window ending at or before the watermark (or
   * `watermark` if given and later: an idle partition caught up with the others) and
   * returns their parts: from the window after the last one closed (or the first window
   * holding a record) through the last one due.
   */
  closeDue(watermark = this.watermark): ClosedPart[] {
    const due = Math.max(watermark, this.watermark);
    let first: number;
    if (Number.isFinite(this.closedEnd)) first = this.closedEnd;
    else if (this.open.size > 0) first = Math.min(...this.open.keys());
    else return [];
    const parts: ClosedPart[] = [];
    let start = first;
    let quiet = 0;
    while (start + this.windowMs <= due) {
      const part = this.open.get(start);
      if (part === undefined) {
        const nextHeld = this.open.size > 0 ? Math.min(...this.open.keys()) : Infinity;
        if (quiet >= this.maxQuietWindows) {
          // Jump over the rest of a long gap: a clock leap must not make millions of parts.
          const resume = Math.min(nextHeld, Math.floor(due / this.windowMs) * this.windowMs);
          this.skippedQuiet += (resume - start) / this.windowMs;
          start = resume;
          quiet = 0;
          continue;
        }
        quiet++;
      } else {
        quiet = 0;
      }
      parts.push(this.makePart(start, part));
      this.open.delete(start);
      start += this.windowMs;
      this.closedEnd = start;
    }
    return parts;
  }

  private makePart(start: number, part: OpenPart | undefined): ClosedPart {
    // Shard ids from the wire: fromEntries defines each one as an own property, where
    // assigning `__proto__` would set the prototype and lose its load.
    const counts: Record<string, number> =
      part === undefined ? {} : Object.fromEntries(part.counts);
    const closed: ClosedPart = {
      start,
      end: start + this.windowMs,
      partition: this.partition,
      from: this.startOffset,
      to: this.lastProcessed,
      records: part?.records ?? 0,
      late: this.pendingLate,
      rejected: this.pendingRejected,
      counts,
    };
    this.pendingLate = 0;
    this.pendingRejected = {};
    return closed;
  }

  private tallyRejection(reason: RejectionReason): void {
    this.pendingRejected[reason] = (this.pendingRejected[reason] ?? 0) + 1;
  }
}
