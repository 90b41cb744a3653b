import type { CountRecord, RejectionReason } from './count-record.js';
import { UsageError } from '../errors/usage-error.js';
import { remapCounts, ShardRetirement } from './shard-retirement.js';
import { outsideUniverse, tooManyShards, type ShardUniverse } from './shard-universe.js';

/** One finished window: the per-shard count vector the judge works on. */
export interface ClosedWindow {
  /** Window start, epoch ms, inclusive; a multiple of the hop. */
  readonly start: number;
  /** Window end, epoch ms, exclusive. */
  readonly end: number;
  /**
   * Load per shard, indexed like the universe. Its length is the universe
   * size at close time (a growing universe may have grown meanwhile). The
   * consumer owns the array.
   */
  readonly counts: Float64Array;
  /** Sum of `counts`: the window's N. */
  readonly total: number;
  /**
   * Units of load (not records) that arrived after a window they belonged to
   * had closed, since the previous closed window. A late unit still counts in
   * any covering window that was open; a record that missed every covering
   * window is also a "too late" rejection.
   */
  readonly late: number;
  /** Records rejected since the previous closed window, by reason. */
  readonly rejected: Readonly<Partial<Record<RejectionReason, number>>>;
  /**
   * A stretch without records, longer than `maxQuietWindows`, that ended just before this
   * window: its windows were not judged one empty window at a time. Absent otherwise.
   */
  readonly gapBefore?: QuietGap;
}

/** A run of windows without a record, skipped as a whole (see {@link ClosedWindow.gapBefore}). */
export interface QuietGap {
  /** Start of the first skipped window, epoch ms. */
  readonly start: number;
  /** End of the last skipped window, epoch ms. */
  readonly end: number;
  /** Windows skipped (start positions, so sliding windows count each hop). */
  readonly windows: number;
}

/** Window settings; the CLI turns `--window 10s` etc. into milliseconds. */
export interface WindowOptions {
  /** `--window`: window length in ms, a whole number above zero. */
  readonly windowMs: number;
  /**
   * `--hop`: distance between window starts in ms; must divide the window
   * length. Equal to the window length (the default) means tumbling windows;
   * shorter means sliding windows, each record counting in every window that
   * covers it.
   */
  readonly hopMs?: number;
  /** `--lateness`: how far the watermark trails the newest timestamp (default 0). */
  readonly latenessMs?: number;
  /**
   * The most all-zero windows closed one by one for a quiet stretch that closes at once
   * (default 360). A silent stream is a finding, but a jump of event time over hours or
   * days must not be judged one empty window at a time: a longer stretch is skipped whole
   * and reported as a gap ({@link ClosedWindow.gapBefore}, {@link WindowTotals.gaps}).
   * Windows a live source closes on the wall clock close one by one and never count here.
   */
  readonly maxQuietWindows?: number;
}

/** Running totals since the aggregator was built. */
export interface WindowTotals {
  /** Records counted in at least one window. */
  readonly records: number;
  /** Units of load of those records. */
  readonly load: number;
  /** Units of load that missed at least one covering window (see {@link ClosedWindow.late}). */
  readonly late: number;
  /** Records that missed at least one covering window. */
  readonly lateRecords: number;
  /** Rejected records by reason, including "too late". */
  readonly rejected: Readonly<Partial<Record<RejectionReason, number>>>;
  readonly windowsClosed: number;
  /** All-zero windows not emitted because a quiet stretch exceeded the cap. */
  readonly quietWindowsSkipped: number;
  /** Quiet stretches skipped whole, in order (at most the first {@link keptGaps}). */
  readonly gaps: readonly QuietGap[];
  /** Quiet stretches skipped whole, all of them. */
  readonly gapCount: number;
  /** Records that missed every covering window, by source partition. */
  readonly lateByPartition: ReadonlyMap<number, number>;
  /**
   * Of those, the records older than one their own partition had already delivered: the
   * partition itself was out of time order (written so by its producer), which only a
   * lateness as long as the disorder covers; the rest were late because other partitions
   * had moved the watermark on (an idle partition's return, a quiet-time close).
   */
  readonly outOfOrderByPartition: ReadonlyMap<number, number>;
}

/** How many skipped gaps the totals keep (the count goes on). */
export const keptGaps = 20;

/** Event-time progress of one source partition. */
interface PartitionClock {
  /** Newest timestamp counted from this partition (-Infinity before its first record). */
  newest: number;
  /** Idle partitions do not hold the watermark back until they deliver again. */
  idle: boolean;
}

interface OpenWindow {
  counts: Float64Array;
  total: number;
}

const defaultMaxQuietWindows = 360;
const smallestGrowingCapacity = 64;

/**
 * Event-time windows over a shard universe. Windows are aligned to multiples
 * of the hop since the Unix epoch (with the default hop: of the window
 * length).
 *
 * Event time is kept per source partition (a Kafka partition; a file, stdin or a scenario
 * is partition 0). The watermark is the oldest of the active partitions' newest
 * timestamps, minus the lateness: a window closes, in start order, once every active
 * partition has passed its end, so records in order within their partition are never
 * late, whatever the interleaving of partitions. A partition marked idle
 * ({@link markIdle}) stops holding the others back until it delivers again; a partition
 * announced with {@link expectPartition} holds them back from before its first record.
 * With no active partition the newest timestamp of any partition counts. The watermark
 * never moves back.
 *
 * Windows between the first and the last one seen close too, as all-zero windows; a
 * longer quiet stretch than `maxQuietWindows` closing at once is skipped whole and
 * reported as a gap. Memory is O(m x open windows); per record the work is one id
 * lookup and one typed-array add per covering window, plus O(partitions) when the
 * slowest partition moves.
 */
export class EventTimeWindows {
  /** Window length in ms. */
  readonly windowMs: number;
  /** Hop in ms (equal to the window length for tumbling windows). */
  readonly hopMs: number;
  /** Lateness in ms. */
  readonly latenessMs: number;
  private readonly universe: ShardUniverse;
  private readonly onClose: (window: ClosedWindow) => void;
  private readonly windowsPerRecord: number;
  private readonly maxQuietWindows: number;
  private readonly open = new Map<number, OpenWindow>();
  private newest = Number.NEGATIVE_INFINITY;
  private currentWatermark = Number.NEGATIVE_INFINITY;
  /** Lowest window index not yet closed, once any record has been counted. */
  private nextToClose = Number.POSITIVE_INFINITY;
  /** End of window `nextToClose`: the watermark at which closing is due. */
  private dueAt = Number.POSITIVE_INFINITY;
  private closedThrough = Number.NEGATIVE_INFINITY;
  private highestOpened = Number.NEGATIVE_INFINITY;
  private cachedIndex = Number.NaN;
  private cachedWindow: OpenWindow | null = null;
  private pendingLate = 0;
  private pendingRejected: Partial<Record<RejectionReason, number>> = {};
  private pendingGap: QuietGap | null = null;
  /** Event time per source partition, indexed by partition number. */
  private readonly clocks: (PartitionClock | undefined)[] = [];
  private partitionCount = 0;
  /** The oldest newest timestamp among active partitions; -Infinity when one has none yet. */
  private slowestActive = Number.NEGATIVE_INFINITY;
  private activePartitions = 0;
  private readonly lateByPartition = new Map<number, number>();
  private readonly outOfOrderByPartition = new Map<number, number>();
  private readonly running = {
    records: 0,
    load: 0,
    late: 0,
    lateRecords: 0,
    rejected: {} as Partial<Record<RejectionReason, number>>,
    windowsClosed: 0,
    quietWindowsSkipped: 0,
    gaps: [] as QuietGap[],
    gapCount: 0,
  };

  /**
   * @param universe the shards counts are indexed by; a growing one may grow while windows are open
   * @param options window length, hop, lateness; validated here (UsageError naming the option)
   * @param onClose receives each closed window, in start order, synchronously
   */
  constructor(
    universe: ShardUniverse,
    options: WindowOptions,
    onClose: (window: ClosedWindow) => void,
  ) {
    const windowMs = options.windowMs;
    if (!Number.isSafeInteger(windowMs) || windowMs <= 0) {
      throw new UsageError(
        '--window',
        `${windowMs}ms`,
        'is not a whole number of milliseconds above zero',
      );
    }
    const hopMs = options.hopMs ?? windowMs;
    if (!Number.isSafeInteger(hopMs) || hopMs <= 0) {
      throw new UsageError(
        '--hop',
        `${hopMs}ms`,
        'is not a whole number of milliseconds above zero',
      );
    }
    if (hopMs > windowMs || windowMs % hopMs !== 0) {
      throw new UsageError('--hop', `${hopMs}ms`, `does not divide --window ${windowMs}ms`);
    }
    const latenessMs = options.latenessMs ?? 0;
    if (!Number.isSafeInteger(latenessMs) || latenessMs < 0) {
      throw new UsageError(
        '--lateness',
        `${latenessMs}ms`,
        'is not a whole number of milliseconds, zero or more',
      );
    }
    const maxQuietWindows = options.maxQuietWindows ?? defaultMaxQuietWindows;
    if (!Number.isSafeInteger(maxQuietWindows) || maxQuietWindows < 0) {
      throw new UsageError(
        '--max-quiet-windows',
        String(maxQuietWindows),
        'is not a whole number, zero or more',
      );
    }
    this.universe = universe;
    this.onClose = onClose;
    this.windowMs = windowMs;
    this.hopMs = hopMs;
    this.latenessMs = latenessMs;
    this.windowsPerRecord = windowMs / hopMs;
    this.maxQuietWindows = maxQuietWindows;
  }

  /**
   * The oldest active partition's newest timestamp minus the lateness (see the class
   * comment); -Infinity before any record. Never moves back.
   */
  get watermark(): number {
    return this.currentWatermark;
  }

  /** Newest timestamp counted from any partition; -Infinity before any record. */
  get newestSeen(): number {
    return this.newest;
  }

  /** Newest timestamp counted from `partition`; -Infinity before its first record. */
  newestOf(partition: number): number {
    return this.clocks[partition]?.newest ?? Number.NEGATIVE_INFINITY;
  }

  /** Partitions marked idle, in order. */
  get idlePartitions(): number[] {
    const idle: number[] = [];
    this.clocks.forEach((clock, partition) => {
      if (clock?.idle === true) idle.push(partition);
    });
    return idle;
  }

  /** Partitions seen or expected so far. */
  get partitions(): number {
    return this.partitionCount;
  }

  /**
   * Announces a partition with records still to come (a Kafka partition with a backlog):
   * it holds the watermark back from now until its first record, or until it is marked
   * idle. Does nothing for a partition already known.
   */
  expectPartition(partition: number): void {
    if (this.clocks[partition] !== undefined) return;
    this.clocks[partition] = { newest: Number.NEGATIVE_INFINITY, idle: false };
    this.partitionCount++;
    this.activePartitions++;
    this.slowestActive = Number.NEGATIVE_INFINITY;
  }

  /**
   * A partition that has delivered nothing for a while stops holding the others back (it
   * becomes active again with its next record; records it sends for windows that closed
   * meanwhile are late). May close windows. Returns true when the partition was active.
   */
  markIdle(partition: number): boolean {
    const clock = this.clocks[partition];
    if (clock === undefined || clock.idle) return false;
    clock.idle = true;
    this.activePartitions--;
    this.recomputeSlowest();
    this.advanceWatermark();
    if (this.currentWatermark >= this.dueAt) {
      this.closeThrough(Math.floor((this.currentWatermark - this.windowMs) / this.hopMs));
    }
    return true;
  }

  /** Number of windows holding counts and not yet closed. */
  get openWindows(): number {
    return this.open.size;
  }

  /** A snapshot of the running totals. */
  get totals(): WindowTotals {
    return {
      ...this.running,
      rejected: { ...this.running.rejected },
      gaps: [...this.running.gaps],
      lateByPartition: new Map(this.lateByPartition),
      outOfOrderByPartition: new Map(this.outOfOrderByPartition),
    };
  }

  /** Counts a validated record (see {@link add}). */
  addRecord(record: CountRecord): void {
    this.add(record.ts, record.shard, record.count);
  }

  /**
   * Counts `count` units of load for `shard` at event time `ts` (epoch ms).
   * An id outside a declared universe, or beyond a full growing one, is
   * rejected; a record whose window already closed is counted as late. May
   * close windows (calling `onClose`) when it advances the watermark.
   * Allocation-free unless it opens a window or meets a new partition. Returns the
   * shard's index when the record was counted in at least one window, else -1 (rejected
   * or too late). `partition` is the source partition the record came from (default 0).
   */
  add(ts: number, shard: string, count: number, partition = 0): number {
    if (!Number.isFinite(ts)) {
      this.reject('bad timestamp');
      return -1;
    }
    let index = this.universe.admit(shard);
    if (index === tooManyShards) index = this.admitAfterClosing(ts, shard, partition);
    if (index < 0) {
      this.reject(index === outsideUniverse ? 'outside universe' : 'too many shards');
      return -1;
    }
    if (ts > this.newest) this.newest = ts;
    this.advancePartition(partition, ts);
    const lastIndex = Math.floor(ts / this.hopMs);
    if (this.windowsPerRecord === 1) {
      let window = lastIndex === this.cachedIndex ? this.cachedWindow : null;
      if (window === null) {
        window = this.windowFor(lastIndex);
        if (window === null) {
          this.countLate(count, true, partition, ts);
          return -1;
        }
      }
      addTo(window, index, count);
    } else {
      let missed = 0;
      for (let window = lastIndex - this.windowsPerRecord + 1; window <= lastIndex; window++) {
        const open = this.windowFor(window);
        if (open === null) missed++;
        else addTo(open, index, count);
      }
      if (missed > 0) this.countLate(count, missed === this.windowsPerRecord, partition, ts);
      if (missed === this.windowsPerRecord) return -1;
    }
    this.running.records++;
    this.running.load += count;
    if (this.currentWatermark >= this.dueAt) {
      this.closeThrough(Math.floor((this.currentWatermark - this.windowMs) / this.hopMs));
    }
    return index;
  }

  /** Counts a rejected record by reason; it shows in the next closed window. */
  reject(reason: RejectionReason): void {
    this.pendingRejected[reason] = (this.pendingRejected[reason] ?? 0) + 1;
    this.running.rejected[reason] = (this.running.rejected[reason] ?? 0) + 1;
  }

  /**
   * Wall-clock closing for a live source that has gone quiet: closes every
   * window whose end plus the lateness is at or before `nowMs`, including
   * all-zero windows after the last record (silence is a finding). Records
   * that arrive for them later are late. Does nothing before the first record.
   */
  closeDue(nowMs: number): void {
    this.closeThrough(Math.floor((nowMs - this.latenessMs - this.windowMs) / this.hopMs));
  }

  /** Closes every window still open, in order: the end of a file. */
  closeAll(): void {
    this.closeThrough(this.highestOpened);
  }

  private windowFor(window: number): OpenWindow | null {
    const existing = this.open.get(window);
    if (existing !== undefined) {
      this.cachedIndex = window;
      this.cachedWindow = existing;
      return existing;
    }
    if (
      window <= this.closedThrough ||
      window * this.hopMs + this.windowMs <= this.currentWatermark
    ) {
      return null;
    }
    const capacity = this.universe.declared
      ? this.universe.size
      : Math.max(smallestGrowingCapacity, this.universe.size * 2);
    const created: OpenWindow = { counts: new Float64Array(capacity), total: 0 };
    this.open.set(window, created);
    if (window < this.nextToClose) this.setNextToClose(window);
    if (window > this.highestOpened) this.highestOpened = window;
    this.cachedIndex = window;
    this.cachedWindow = created;
    return created;
  }

  /** A late record at `ts`, after its partition's clock has taken it in. */
  private countLate(count: number, missedAll: boolean, partition: number, ts: number): void {
    this.pendingLate += count;
    this.running.late += count;
    this.running.lateRecords++;
    if (missedAll) {
      this.reject('too late');
      this.lateByPartition.set(partition, (this.lateByPartition.get(partition) ?? 0) + 1);
      // The clock keeps the newest of the partition: newer than ts only if it came before.
      if (ts < (this.clocks[partition]?.newest ?? ts)) {
        const before = this.outOfOrderByPartition.get(partition) ?? 0;
        this.outOfOrderByPartition.set(partition, before + 1);
      }
    }
  }

  /** Moves a partition's event time to `ts` (when newer) and the watermark with it. */
  private advancePartition(partition: number, ts: number): void {
    let clock = this.clocks[partition];
    if (clock === undefined) {
      if (!Number.isSafeInteger(partition) || partition < 0) {
        throw new RangeError(`source partition ${partition} is not a whole number, 0 or more`);
      }
      clock = { newest: ts, idle: false };
      this.clocks[partition] = clock;
      this.partitionCount++;
      this.activePartitions++;
      if (this.activePartitions === 1 || ts < this.slowestActive) this.slowestActive = ts;
      this.advanceWatermark();
      return;
    }
    if (clock.idle) {
      clock.idle = false;
      this.activePartitions++;
      if (ts > clock.newest) clock.newest = ts;
      if (this.activePartitions === 1 || clock.newest < this.slowestActive) {
        this.slowestActive = clock.newest;
      }
      this.advanceWatermark();
      return;
    }
    if (ts <= clock.newest) return;
    const wasSlowest = clock.newest <= this.slowestActive;
    clock.newest = ts;
    if (wasSlowest) {
      if (this.partitionCount === 1) this.slowestActive = ts;
      else this.recomputeSlowest();
      this.advanceWatermark();
    }
  }

  private recomputeSlowest(): void {
    let slowest = Number.POSITIVE_INFINITY;
    for (const clock of this.clocks) {
      if (clock !== undefined && !clock.idle && clock.newest < slowest) slowest = clock.newest;
    }
    this.slowestActive = slowest;
  }

  /** The watermark from the partitions' clocks; it only ever moves forward. */
  private advanceWatermark(): void {
    const basis = this.activePartitions > 0 ? this.slowestActive : this.newest;
    const watermark = basis - this.latenessMs;
    if (watermark > this.currentWatermark) this.currentWatermark = watermark;
  }

  private setNextToClose(window: number): void {
    this.nextToClose = window;
    this.dueAt = window * this.hopMs + this.windowMs;
  }

  /** Closes windows nextToClose..last in order, empty ones included (capped per quiet run). */
  private closeThrough(last: number): void {
    while (this.nextToClose <= last) {
      const window = this.nextToClose;
      const state = this.open.get(window);
      if (state !== undefined) {
        this.open.delete(window);
        this.emit(window, state.counts, state.total);
        this.finishClosing(window);
        continue;
      }
      const quietUntil = Math.min(last, this.nextOpenAfter(window) - 1);
      const quietRun = quietUntil - window + 1;
      if (quietRun <= this.maxQuietWindows) {
        for (let quiet = window; quiet <= quietUntil; quiet++) this.emit(quiet, null, 0);
      } else {
        this.skipGap(window, quietUntil, quietRun);
      }
      this.finishClosing(quietUntil);
    }
  }

  private finishClosing(window: number): void {
    this.closedThrough = window;
    if (this.cachedIndex <= window) {
      this.cachedIndex = Number.NaN;
      this.cachedWindow = null;
    }
    // Stays finite from now on, so the stretch before the next record's
    // window closes as all-zero windows instead of vanishing.
    this.setNextToClose(window + 1);
  }

  /** Skips a quiet run whole: the next window emitted carries it as its gap. */
  private skipGap(first: number, last: number, windows: number): void {
    // A stretch closed in two steps, with no window between, is one gap.
    const previous = this.pendingGap;
    const gap: QuietGap = {
      start: previous?.start ?? first * this.hopMs,
      end: last * this.hopMs + this.windowMs,
      windows: (previous?.windows ?? 0) + windows,
    };
    this.pendingGap = gap;
    this.running.quietWindowsSkipped += windows;
    const kept = this.running.gaps;
    if (previous !== null) {
      if (kept[kept.length - 1] === previous) kept[kept.length - 1] = gap;
      return;
    }
    this.running.gapCount++;
    if (kept.length < keptGaps) kept.push(gap);
  }

  private nextOpenAfter(window: number): number {
    let next = Number.POSITIVE_INFINITY;
    for (const key of this.open.keys()) if (key > window && key < next) next = key;
    return next;
  }

  private emit(window: number, counts: Float64Array | null, total: number): void {
    const retained = this.retireStaleShards(window, counts, total);
    const size = this.universe.size;
    const start = window * this.hopMs;
    const closed: ClosedWindow = {
      start,
      end: start + this.windowMs,
      counts: fitCounts(retained, size),
      total,
      late: this.pendingLate,
      rejected: this.pendingRejected,
      ...(this.pendingGap === null ? {} : { gapBefore: this.pendingGap }),
    };
    this.pendingLate = 0;
    this.pendingRejected = {};
    this.pendingGap = null;
    this.running.windowsClosed++;
    this.onClose(closed);
  }

  /**
   * At a window boundary, a growing universe retires the ids that stopped reporting
   * (shard-retirement.ts); the open windows and the closing one follow the new indices.
   */
  private retireStaleShards(
    window: number,
    counts: Float64Array | null,
    total: number,
  ): Float64Array | null {
    if (this.universe.declared) return counts;
    this.retirement ??= new ShardRetirement(this.universe);
    const open = [...this.open.values()];
    const remap = this.retirement.atBoundary(
      window,
      counts,
      total,
      open.map((state) => state.counts),
    );
    if (remap === null) return counts;
    for (const state of open) state.counts = remapCounts(state.counts, remap);
    return counts === null ? null : remapCounts(counts, remap);
  }

  /**
   * A full growing universe refused `shard`: its timestamp still moves event time on (it is
   * valid; only room is lacking), and the windows that closes may retire ids that stopped
   * reporting, so the id is offered once more. Without this a flood that fills the
   * universe and stops would leave every later id refused and no window closing.
   */
  private admitAfterClosing(ts: number, shard: string, partition: number): number {
    if (ts > this.newest) this.newest = ts;
    this.advancePartition(partition, ts);
    if (this.currentWatermark >= this.dueAt) {
      this.closeThrough(Math.floor((this.currentWatermark - this.windowMs) / this.hopMs));
    }
    return this.universe.admit(shard);
  }

  private retirement: ShardRetirement | null = null;
}

function addTo(window: OpenWindow, index: number, count: number): void {
  if (index >= window.counts.length) {
    const grown = new Float64Array(Math.max(index + 1, window.counts.length * 2));
    grown.set(window.counts);
    window.counts = grown;
  }
  window.counts[index] += count;
  window.total += count;
}

/** A count vector of exactly the universe size; growing universes over- or under-allocate. */
function fitCounts(counts: Float64Array | null, size: number): Float64Array {
  if (counts === null) return new Float64Array(size);
  if (counts.length === size) return counts;
  if (counts.length > size) return counts.slice(0, size);
  const fitted = new Float64Array(size);
  fitted.set(counts);
  return fitted;
}
