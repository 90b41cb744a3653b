import type { RejectionReason } from '../window/count-record.js';
import type { PartialSummary, PartitionPart } from './partial-summary.js';

/** Which source partitions a merged window rests on. */
export interface WindowCoverage {
  /** True when every partition of the source topic sent its part. */
  readonly complete: boolean;
  /** The source topic's partition count. */
  readonly partitions: number;
  /** Partitions whose part had not arrived by the deadline, ascending (empty when complete). */
  readonly missing: readonly number[];
  /** Second parts for a partition already merged into this window, dropped. */
  readonly duplicates: number;
  /** Of those, parts whose counts differed from the one kept (see {@link WindowMerge}). */
  readonly conflicts: number;
}

/** One window put together from partial summaries. */
export interface MergedWindow {
  readonly start: number;
  readonly end: number;
  /** Load per shard id over the partitions merged. */
  readonly counts: ReadonlyMap<string, number>;
  readonly total: number;
  readonly records: number;
  readonly late: number;
  readonly rejected: Readonly<Partial<Record<RejectionReason, number>>>;
  readonly coverage: WindowCoverage;
}

/** What became of one summary handed to {@link WindowMerge.add}. */
export interface AddOutcome {
  /** Parts merged into a pending window. */
  readonly merged: number;
  /** Parts for a partition the window already had (a rebalance made them twice). */
  readonly duplicates: number;
  /** Parts for a window already judged: too late to change its verdict. */
  readonly afterVerdict: number;
  /** Set when the whole summary was refused: its settings differ from the first one's. */
  readonly refused?: string;
}

/** Settings of a {@link WindowMerge}. */
export interface WindowMergeOptions {
  /** The judge's window length, ms: summaries of another length are refused. */
  readonly windowMs: number;
  /**
   * How long after the first part of a window arrives the window waits for the rest, ms;
   * then it is judged on the parts it has and marked incomplete.
   */
  readonly deadlineMs: number;
  /** End of the last window judged before (a resume): older windows are not made again. */
  readonly judgedThrough?: number;
}

const maxFilledWindows = 10_000;

interface PendingWindow {
  readonly start: number;
  /** The judge's clock when the window was first heard of. */
  readonly firstSeen: number;
  readonly parts: Map<number, PartitionPart>;
  duplicates: number;
  conflicts: number;
}

/**
 * Puts windows together from the partial summaries of the counting instances: the judge's
 * pure core, no Kafka and no clock (the time is passed in).
 *
 * Dedupe. A part is one partition's whole contribution to a window (see
 * partial-summary.ts), so a window takes at most one part per partition: a later part for
 * the same (window, partition) is the same records counted again after a rebalance or a
 * crash before the commit, whatever offset range it names (a new owner resumes from the
 * last commit, so its range overlaps the first owner's or starts after it; either way it
 * claims the same records). The first part is kept; a later one is dropped and counted as
 * a duplicate, and as a conflict too when its counts differ (which the per-partition
 * watermark rules out unless an idle partition was closed by another partition's
 * watermark; see partition-counter.ts).
 *
 * Order. Windows are released in start order: the oldest pending window goes once it has
 * a part for every partition, or once `deadlineMs` has passed since its first part came,
 * marked incomplete with the missing partitions named. A window no part was ever heard of
 * that lies between two known ones is made when the later one is first heard of, so it
 * too is released incomplete, never skipped. A window released stays released: parts for
 * it that come later are counted as {@link AddOutcome.afterVerdict} and dropped.
 */
export class WindowMerge {
  private readonly windowMs: number;
  private readonly deadlineMs: number;
  private readonly pending = new Map<number, PendingWindow>();
  private released: number;
  private partitions: number | null = null;
  private settingsText: string | null = null;

  constructor(options: WindowMergeOptions) {
    if (!Number.isSafeInteger(options.windowMs) || options.windowMs <= 0) {
      throw new RangeError(`window length ${options.windowMs} ms is not a whole number above zero`);
    }
    if (!(options.deadlineMs >= 0)) {
      throw new RangeError(`deadline ${options.deadlineMs} ms is not a duration`);
    }
    this.windowMs = options.windowMs;
    this.deadlineMs = options.deadlineMs;
    this.released = options.judgedThrough ?? Number.NEGATIVE_INFINITY;
  }

  /** End of the last window released (or judged before a resume). */
  get releasedThrough(): number {
    return this.released;
  }

  /** Windows heard of and not yet released. */
  get pendingWindows(): number {
    return this.pending.size;
  }

  /** The source topic's partition count, once a summary has said it. */
  get sourcePartitions(): number | null {
    return this.partitions;
  }

  /** Takes one summary received at `now` (epoch ms). O(parts + windows made). */
  add(summary: PartialSummary, now: number): AddOutcome {
    const settings = JSON.stringify([
      summary.topic,
      summary.sourcePartitions,
      summary.windowMs,
      summary.latenessMs,
      summary.shardFrom,
    ]);
    if (summary.windowMs !== this.windowMs) {
      return refuse(`window ${summary.windowMs} ms is not --window ${this.windowMs} ms`);
    }
    if (this.settingsText === null) {
      this.settingsText = settings;
      this.partitions = summary.sourcePartitions;
    } else if (settings !== this.settingsText) {
      return refuse(`settings ${settings} differ from the first summary's ${this.settingsText}`);
    }
    if (summary.end <= this.released) {
      return { merged: 0, duplicates: 0, afterVerdict: summary.parts.length };
    }
    const window = this.windowAt(summary.start, now);
    let merged = 0;
    let duplicates = 0;
    for (const part of summary.parts) {
      const kept = window.parts.get(part.partition);
      if (kept === undefined) {
        window.parts.set(part.partition, part);
        merged++;
        continue;
      }
      duplicates++;
      window.duplicates++;
      if (!sameCounts(kept, part)) window.conflicts++;
    }
    return { merged, duplicates, afterVerdict: 0 };
  }

  /**
   * Releases, in start order, the windows that are complete or past their deadline at
   * `now`; stops at the first that is neither.
   */
  due(now: number): MergedWindow[] {
    const out: MergedWindow[] = [];
    for (;;) {
      const window = this.oldest();
      if (window === undefined) return out;
      const complete = window.parts.size === this.partitions;
      if (!complete && now - window.firstSeen < this.deadlineMs) return out;
      out.push(this.release(window));
    }
  }

  /** Releases every pending window, complete or not (the summaries ended). */
  releaseAll(): MergedWindow[] {
    const out: MergedWindow[] = [];
    for (let window = this.oldest(); window !== undefined; window = this.oldest()) {
      out.push(this.release(window));
    }
    return out;
  }

  private oldest(): PendingWindow | undefined {
    let oldest: PendingWindow | undefined;
    for (const window of this.pending.values()) {
      if (oldest === undefined || window.start < oldest.start) oldest = window;
    }
    return oldest;
  }

  /** The pending window starting at `start`, made (with any unheard-of ones around it) if new. */
  private windowAt(start: number, now: number): PendingWindow {
    const existing = this.pending.get(start);
    if (existing !== undefined) return existing;
    const keys = [...this.pending.keys()];
    const lowest = Number.isFinite(this.released) ? this.released : Math.min(start, ...keys);
    const highest = Math.max(start, ...keys);
    // A clock leap must not make millions of empty windows: at most this many are filled in.
    const from = Math.max(lowest, highest - maxFilledWindows * this.windowMs);
    for (let at = Math.min(from, start); at <= highest; at += this.windowMs) {
      if (!this.pending.has(at) && (at >= from || at === start)) {
        this.pending.set(at, {
          start: at,
          firstSeen: now,
          parts: new Map(),
          duplicates: 0,
          conflicts: 0,
        });
      }
    }
    return this.pending.get(start) as PendingWindow;
  }

  private release(window: PendingWindow): MergedWindow {
    this.pending.delete(window.start);
    this.released = window.start + this.windowMs;
    const counts = new Map<string, number>();
    const rejected: Partial<Record<RejectionReason, number>> = {};
    let total = 0;
    let records = 0;
    let late = 0;
    for (const part of window.parts.values()) {
      for (const [shard, load] of Object.entries(part.counts)) {
        counts.set(shard, (counts.get(shard) ?? 0) + load);
        total += load;
      }
      records += part.records;
      late += part.late;
      for (const [reason, count] of Object.entries(part.rejected)) {
        const key = reason as RejectionReason;
        rejected[key] = (rejected[key] ?? 0) + (count ?? 0);
      }
    }
    const partitions = this.partitions ?? 0;
    const missing: number[] = [];
    for (let partition = 0; partition < partitions; partition++) {
      if (!window.parts.has(partition)) missing.push(partition);
    }
    return {
      start: window.start,
      end: window.start + this.windowMs,
      counts,
      total,
      records,
      late,
      rejected,
      coverage: {
        complete: missing.length === 0,
        partitions,
        missing,
        duplicates: window.duplicates,
        conflicts: window.conflicts,
      },
    };
  }
}

function refuse(reason: string): AddOutcome {
  return { merged: 0, duplicates: 0, afterVerdict: 0, refused: reason };
}

function sameCounts(a: PartitionPart, b: PartitionPart): boolean {
  const keysA = Object.keys(a.counts);
  if (keysA.length !== Object.keys(b.counts).length || a.records !== b.records) return false;
  return keysA.every((key) => a.counts[key] === b.counts[key]);
}
