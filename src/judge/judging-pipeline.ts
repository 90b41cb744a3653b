import type { RejectionReason } from '../window/count-record.js';
import {
  EventTimeWindows,
  type ClosedWindow,
  type QuietGap,
  type WindowOptions,
  type WindowTotals,
} from '../window/event-time-window.js';
import { UsageError } from '../errors/usage-error.js';
import type { FeedSink } from '../window/feed-sink.js';
import type { ShardUniverse } from '../window/shard-universe.js';
import { describeSpan } from './time-span.js';
import type { Judgement } from './judgement.js';
import type { KeyVerdict, WindowKeyAnalyst } from './key-verdict.js';
import { PipelineEvents } from './pipeline-events.js';

/** How the pipeline treats its source's clock. */
export interface PipelineClockOptions {
  /**
   * A live source (Kafka, standard input, a real-time scenario): windows close on the wall
   * clock when it goes quiet, partitions go idle, and records stamped more than
   * `maxAheadMs` ahead of the wall clock are rejected. Otherwise a replay (a file, a past
   * range): a record more than `maxAheadMs` ahead of its partition's own progress is held
   * until later records confirm the jump (see {@link JudgingPipeline}). Default false.
   */
  readonly live?: boolean;
  /** `--max-ahead`: the future bound, ms (default 1 hour). */
  readonly maxAheadMs?: number;
  /** A live partition without records for this long stops holding the others back (default window + lateness). */
  readonly idleAfterMs?: number;
}

/**
 * What judges the pipeline's windows, one at a time in start order: a Judge on this thread
 * (a judgement), or one on another thread (a promise of it; src/cli/judge-thread.ts).
 */
export interface WindowJudge {
  judge(window: ClosedWindow): Judgement | Promise<Judgement>;
}

/**
 * With a judge on another thread, reading waits ({@link JudgingPipeline.room}) once this
 * many windows, or this many shard counts across them, wait for their verdicts.
 */
export const maxPendingWindows = 64;
export const maxPendingCounts = 1 << 22;

/** What a window's verdict gets from the moment it closed (the idle partitions then). */
interface CloseContext {
  /** The key verdict, once the window is judged (null without key analysis). */
  readonly keys: ((judgement: Judgement) => KeyVerdict | null) | null;
  readonly idle: readonly number[];
  /** The note on idle partitions, when they changed since the last window. */
  readonly idleNote: string | null;
}

/** Default of `--max-ahead`: an hour, far beyond any clock skew between honest hosts. */
export const defaultMaxAheadMs = 3_600_000;

/**
 * Records held ahead of their partition's progress confirm the jump once there are this
 * many of them, or once they span a window of event time (two or more records).
 */
export const jumpConfirmRecords = 64;

interface HeldRecord {
  readonly ts: number;
  readonly shard: string;
  readonly count: number;
  readonly key: string | undefined;
}

/** A partition's records beyond the future bound, waiting for confirmation. */
interface HeldRun {
  readonly records: HeldRecord[];
  earliest: number;
  latest: number;
}

/**
 * Records in, judged windows out: event-time windows over a universe feeding a judge, with
 * every step announced on {@link events}. The same for a file, a scenario and Kafka.
 * Pure: the wall clock is passed in, and only the constructor and {@link tick} read it.
 *
 * Event time is kept per source partition (see EventTimeWindows): records in order within
 * their partition are never late. Live sources close windows on the wall clock when they
 * go quiet (silence is a finding): event time is taken to advance with the wall clock
 * since the last tick that saw records, so a window closes once newest event time + quiet
 * time reaches its end plus the lateness. Measuring from the newest record rather than
 * from "now" keeps a replay of old data on standard input from closing every window up to
 * today at its first pause. A live partition quiet for `idleAfterMs` stops holding the
 * others back, and the next verdict says so.
 *
 * Bounded clocks: a timestamp far in the future must not move event time (every later
 * record would be late, and the windows between judged as empty). A live source rejects
 * records stamped more than `maxAheadMs` ahead of the wall clock as "too far ahead". A
 * replay has no wall clock to trust, so a record more than `maxAheadMs` ahead of its
 * partition's newest is held: the next record back within the bound rejects the held ones
 * as "too far ahead", while {@link jumpConfirmRecords} held records, or held records
 * spanning a window, confirm a real jump (traffic resumed after a pause) and are counted.
 * Held records still unconfirmed when the input ends are rejected.
 */
export class JudgingPipeline implements FeedSink {
  readonly events = new PipelineEvents();
  private readonly windows: EventTimeWindows;
  private readonly judge: WindowJudge;
  private readonly clock: () => number;
  private readonly stallAfterMs: number;
  private sawRecordSinceTick = false;
  private lastArrival = Number.NaN;
  private stalled = false;
  private records = 0;
  private readonly keys: WindowKeyAnalyst | null;
  private readonly live: boolean;
  private readonly maxAheadMs: number;
  private readonly idleAfterMs: number;
  /** Live: records stamped after this are too far ahead (wall clock + bound). */
  private aheadLimit: number;
  /** Replays: records held ahead of their partition, by partition. */
  private readonly held = new Map<number, HeldRun>();
  /** Live: wall time of each partition's last record (or of its announcement). */
  private readonly partitionArrival: number[] = [];
  /** Live: partitions that delivered since the last tick. */
  private readonly partitionDelivered: boolean[] = [];
  private backlogged: (partition: number) => boolean = () => false;
  private reportedIdle = '';
  private readonly universe: ShardUniverse;
  /** Judge on another thread: verdicts still to come, published in window order. */
  private verdictQueue: Promise<void> = Promise.resolve();
  private pendingWindows = 0;
  private pendingCounts = 0;
  private failure: { readonly error: unknown } | null = null;
  private roomWaiters: (() => void)[] = [];

  /**
   * @param universe the shards records are counted under
   * @param windowOptions window length, hop, lateness (checked by the windows: UsageError)
   * @param judge judges each closed window, here or on another thread (then verdicts are
   *   announced as they come back, still in window order; see {@link room} and {@link settled})
   * @param clock wall clock, epoch ms (only {@link tick} uses it)
   * @param options `keys`: key analysis, fed every counted keyed request; its verdict goes
   *   into each judgement as `keys` (src/keys/ provides one); `live`, `maxAheadMs`,
   *   `idleAfterMs`: see {@link PipelineClockOptions}
   */
  constructor(
    universe: ShardUniverse,
    windowOptions: WindowOptions,
    judge: WindowJudge,
    clock: () => number = Date.now,
    options: { keys?: WindowKeyAnalyst } & PipelineClockOptions = {},
  ) {
    this.judge = judge;
    this.clock = clock;
    this.keys = options.keys ?? null;
    this.universe = universe;
    this.windows = new EventTimeWindows(universe, windowOptions, (window) =>
      this.judgeWindow(window),
    );
    this.stallAfterMs = this.windows.windowMs + this.windows.latenessMs;
    this.live = options.live ?? false;
    this.maxAheadMs = options.maxAheadMs ?? defaultMaxAheadMs;
    if (!(this.maxAheadMs > 0) || !Number.isSafeInteger(this.maxAheadMs)) {
      throw new UsageError(
        '--max-ahead',
        `${this.maxAheadMs}ms`,
        'is not a whole number of milliseconds above zero',
      );
    }
    this.idleAfterMs = options.idleAfterMs ?? this.stallAfterMs;
    this.aheadLimit = this.live ? clock() + this.maxAheadMs : Number.POSITIVE_INFINITY;
  }

  /**
   * Announces a source partition with records still to come (a Kafka partition with a
   * backlog): it holds windows open until it reports, or, live, until it has been quiet
   * for the idle time while `backlogged` says it has nothing left to fetch.
   */
  expectPartition(partition: number): void {
    this.windows.expectPartition(partition);
    if (this.live) this.partitionArrival[partition] ??= this.clock();
  }

  /** Tells the idle rule which partitions still have records waiting at the source. */
  setBacklogProbe(backlogged: (partition: number) => boolean): void {
    this.backlogged = backlogged;
  }

  /**
   * Counts a validated record; its `key`, if any, goes to the key analysis once the windows
   * have counted the record. Allocation-free unless it opens or closes a window (or the key
   * analysis meets a new shard or window).
   */
  record(ts: number, shard: string, count: number, key?: string, partition = 0): void {
    if (this.failure !== null) throw this.failure.error;
    this.sawRecordSinceTick = true;
    this.records++;
    if (this.live) {
      if (ts > this.aheadLimit) {
        this.reject('too far ahead');
        return;
      }
      this.partitionDelivered[partition] = true;
    } else if (this.held.size > 0 || ts > this.windows.newestOf(partition) + this.maxAheadMs) {
      if (this.holdAhead(ts, shard, count, key, partition)) return;
    }
    this.count(ts, shard, count, key, partition);
  }

  private count(
    ts: number,
    shard: string,
    count: number,
    key: string | undefined,
    partition: number,
  ) {
    const layout = this.universe.layout;
    const index = this.windows.add(ts, shard, count, partition);
    if (key !== undefined && index >= 0 && this.keys !== null) {
      // Closing a window may have retired ids and moved this shard's index.
      const now = this.universe.layout === layout ? index : this.universe.indexOf(shard);
      this.keys.record(ts, now, key, count);
    }
  }

  /**
   * Replays: holds a record too far ahead of its partition, settles a held run when a
   * record comes back within the bound (rejecting the run) or confirms it (counting it).
   * Returns true when the record was held.
   */
  private holdAhead(
    ts: number,
    shard: string,
    count: number,
    key: string | undefined,
    partition: number,
  ): boolean {
    const newest = this.windows.newestOf(partition);
    // A partition's first record has no progress of its own: the source's newest stands in.
    const reference = Number.isFinite(newest) ? newest : this.windows.newestSeen;
    const ahead = Number.isFinite(reference) && ts > reference + this.maxAheadMs;
    const run = this.held.get(partition);
    if (!ahead) {
      if (run !== undefined) {
        this.held.delete(partition);
        for (let at = 0; at < run.records.length; at++) this.reject('too far ahead');
      }
      return false;
    }
    const record: HeldRecord = { ts, shard, count, key };
    if (run === undefined) {
      this.held.set(partition, { records: [record], earliest: ts, latest: ts });
      return true;
    }
    run.records.push(record);
    if (ts < run.earliest) run.earliest = ts;
    if (ts > run.latest) run.latest = ts;
    if (
      run.records.length >= jumpConfirmRecords ||
      run.latest - run.earliest >= this.windows.windowMs
    ) {
      this.held.delete(partition);
      for (const confirmed of run.records) {
        this.count(confirmed.ts, confirmed.shard, confirmed.count, confirmed.key, partition);
      }
    }
    return true;
  }

  /** Counts a rejected record; announced when someone listens. */
  reject(reason: RejectionReason, line?: number): void {
    this.windows.reject(reason);
    if (this.events.listens('record rejected')) {
      this.events.emit('record rejected', line === undefined ? { reason } : { reason, line });
    }
  }

  /**
   * For live sources, called every fraction of a second: closes the windows due by the
   * quiet-time rule above and announces a stall once per quiet stretch.
   */
  tick(): void {
    // Called from timers: a judging failure is reported by the feed and settled(), not here.
    if (this.failure !== null) return;
    const now = this.clock();
    if (this.live) {
      this.aheadLimit = now + this.maxAheadMs;
      this.markIdlePartitions(now);
    }
    if (this.sawRecordSinceTick) {
      this.sawRecordSinceTick = false;
      this.lastArrival = now;
      this.stalled = false;
      return;
    }
    if (Number.isNaN(this.lastArrival)) return;
    const quiet = now - this.lastArrival;
    const newest = this.windows.watermark + this.windows.latenessMs;
    if (!this.stalled && quiet >= this.stallAfterMs) {
      this.stalled = true;
      this.events.emit('source stalled', { quietMs: quiet, newestRecordTs: newest });
    }
    this.windows.closeDue(newest + quiet);
  }

  /**
   * The input ended: held records still unconfirmed are rejected as too far ahead, then
   * every open window closes, the last partial one included.
   */
  finish(): void {
    if (this.failure !== null) throw this.failure.error;
    for (const run of this.held.values()) {
      for (let at = 0; at < run.records.length; at++) this.reject('too far ahead');
    }
    this.held.clear();
    this.windows.closeAll();
  }

  /** Live: partitions quiet for the idle time, with nothing left to fetch, go idle. */
  private markIdlePartitions(now: number): void {
    const partitions = this.partitionDelivered.length;
    for (let partition = 0; partition < partitions; partition++) {
      if (this.partitionDelivered[partition]) {
        this.partitionDelivered[partition] = false;
        this.partitionArrival[partition] = now;
      }
    }
    if (this.windows.partitions < 2) return;
    this.partitionArrival.forEach((arrival, partition) => {
      if (now - arrival >= this.idleAfterMs && !this.backlogged(partition)) {
        this.windows.markIdle(partition);
      }
    });
  }

  /**
   * Judges a window closed elsewhere (`watch --merge` puts windows together from partial
   * summaries): the same events as a window closed here, in the order given.
   */
  judgeClosed(window: ClosedWindow): void {
    this.judgeWindow(window);
  }

  /** Windows holding counts that have not closed (dropped if the run is interrupted). */
  get openWindows(): number {
    return this.windows.openWindows;
  }

  /** Running totals of the windows (records counted, late, rejected by reason). */
  get totals(): WindowTotals & { readonly recordsSeen: number } {
    return { ...this.windows.totals, recordsSeen: this.records };
  }

  /** Source partitions marked idle now. */
  get idlePartitions(): number[] {
    return this.windows.idlePartitions;
  }

  /**
   * With a judge on another thread: undefined while fewer than {@link maxPendingWindows}
   * windows (and {@link maxPendingCounts} counts) wait for verdicts, else a promise that
   * resolves once half of them are out. The record feed waits on it, so a reader faster
   * than the judge holds a bounded backlog. Rejects once judging has failed.
   */
  room(): Promise<void> | undefined {
    if (this.failure !== null) return Promise.reject(this.failure.error as Error);
    if (this.pendingWindows < maxPendingWindows && this.pendingCounts < maxPendingCounts) {
      return undefined;
    }
    return new Promise<void>((resolve) => this.roomWaiters.push(resolve)).then(() => {
      if (this.failure !== null) throw this.failure.error;
    });
  }

  /**
   * Resolves once every window closed so far has its verdict announced (at once for a
   * judge on this thread); rejects with the error if judging failed.
   */
  async settled(): Promise<void> {
    while (this.pendingWindows > 0) await this.verdictQueue;
    if (this.failure !== null) throw this.failure.error;
  }

  private judgeWindow(window: ClosedWindow): void {
    // After a failure nothing more is judged; the feed, finish() and settled() report it.
    if (this.failure !== null) return;
    this.events.emit('window closed', window);
    const context = this.closeContext(window);
    const judged = this.judge.judge(window);
    if (!(judged instanceof Promise)) {
      this.publish(window, judged, context);
      return;
    }
    const counts = window.counts.length;
    this.pendingWindows++;
    this.pendingCounts += counts;
    this.verdictQueue = this.verdictQueue
      .then(() => judged)
      .then(
        (judgement) => {
          if (this.failure === null) this.publish(window, judgement, context);
        },
        (error: unknown) => {
          this.failure ??= { error };
        },
      )
      .catch((error: unknown) => {
        // A listener of the verdict failed: the run stops as it would on this thread.
        this.failure ??= { error };
      })
      .finally(() => {
        this.pendingWindows--;
        this.pendingCounts -= counts;
        this.wakeReaders();
      });
  }

  private wakeReaders(): void {
    if (this.roomWaiters.length === 0) return;
    const drained =
      this.pendingWindows <= maxPendingWindows / 2 && this.pendingCounts <= maxPendingCounts / 2;
    if (!drained && this.failure === null) return;
    const waiters = this.roomWaiters;
    this.roomWaiters = [];
    for (const wake of waiters) wake();
  }

  /** The window's key statistics and idle partitions as it closes, and the idle note when they changed. */
  private closeContext(window: ClosedWindow): CloseContext {
    const keys = this.keys?.close(window) ?? null;
    const idle = this.windows.partitions > 1 ? this.windows.idlePartitions : [];
    const idleText = idle.join(', ');
    if (idleText === this.reportedIdle) return { keys, idle, idleNote: null };
    this.reportedIdle = idleText;
    return {
      keys,
      idle,
      idleNote:
        idle.length === 0
          ? 'every source partition is reporting again'
          : `source partition${idle.length === 1 ? '' : 's'} ${idleText} idle (no records for ${Math.round(this.idleAfterMs / 1000)} s or more): not holding windows back`,
    };
  }

  private publish(window: ClosedWindow, judged: Judgement, context: CloseContext): void {
    const keys = context.keys?.(judged) ?? null;
    let judgement: Judgement = keys === null ? judged : { ...judged, keys };
    const gap = window.gapBefore;
    const { idle, idleNote } = context;
    if (gap !== undefined || idleNote !== null) {
      const notes = [...judgement.notes];
      if (gap !== undefined) notes.push(gapNote(gap));
      if (idleNote !== null) notes.push(idleNote);
      judgement = { ...judgement, notes };
    }
    if (gap !== undefined) {
      judgement = {
        ...judgement,
        gapBefore: {
          start: new Date(gap.start).toISOString(),
          end: new Date(gap.end).toISOString(),
          windows: gap.windows,
        },
      };
    }
    if (idle.length > 0) judgement = { ...judgement, idlePartitions: idle };
    this.events.emit('window judged', { window, judgement });
    for (const incident of judgement.opened) this.events.emit('incident opened', incident);
    for (const incident of judgement.cleared) this.events.emit('incident cleared', incident);
  }
}

/** The verdict note for a skipped quiet stretch. */
export function gapNote(gap: QuietGap): string {
  return `no records from ${new Date(gap.start).toISOString()} to ${new Date(gap.end).toISOString()} (${describeSpan(gap.end - gap.start)}, ${gap.windows} windows): skipped as one gap, not judged`;
}
