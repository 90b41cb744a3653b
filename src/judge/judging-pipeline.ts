import type { RejectionReason } from '../window/count-record.js';
import {
  EventTimeWindows,
  type ClosedWindow,
  type WindowOptions,
  type WindowTotals,
} from '../window/event-time-window.js';
import type { ShardUniverse } from '../window/shard-universe.js';
import type { Judge } from './judge.js';
import type { WindowKeyAnalyst } from './key-verdict.js';
import { PipelineEvents } from './pipeline-events.js';

/**
 * Records in, judged windows out: event-time windows over a universe feeding a judge, with
 * every step announced on {@link events}. The same for a file, a scenario and (later) Kafka.
 * Pure: the wall clock is passed in, and only {@link tick} reads it.
 *
 * Live sources close windows on the wall clock when they go quiet (silence is a finding):
 * event time is taken to advance with the wall clock since the last tick that saw records,
 * so a window closes once newest event time + quiet time reaches its end plus the lateness.
 * Measuring from the newest record rather than from "now" keeps a replay of old data on
 * standard input from closing every window up to today at its first pause.
 */
export class JudgingPipeline {
  readonly events = new PipelineEvents();
  private readonly windows: EventTimeWindows;
  private readonly judge: Judge;
  private readonly clock: () => number;
  private readonly stallAfterMs: number;
  private sawRecordSinceTick = false;
  private lastArrival = Number.NaN;
  private stalled = false;
  private records = 0;
  private readonly keys: WindowKeyAnalyst | null;
  private readonly universe: ShardUniverse;

  /**
   * @param universe the shards records are counted under
   * @param windowOptions window length, hop, lateness (checked by the windows: UsageError)
   * @param judge judges each closed window
   * @param clock wall clock, epoch ms (only {@link tick} uses it)
   * @param options `keys`: key analysis, fed every counted keyed request; its verdict goes
   *   into each judgement as `keys` (src/keys/ provides one)
   */
  constructor(
    universe: ShardUniverse,
    windowOptions: WindowOptions,
    judge: Judge,
    clock: () => number = Date.now,
    options: { keys?: WindowKeyAnalyst } = {},
  ) {
    this.judge = judge;
    this.clock = clock;
    this.keys = options.keys ?? null;
    this.universe = universe;
    this.windows = new EventTimeWindows(universe, windowOptions, (window) =>
      this.judgeWindow(window),
    );
    this.stallAfterMs = this.windows.windowMs + this.windows.latenessMs;
  }

  /**
   * Counts a validated record; its `key`, if any, goes to the key analysis once the windows
   * have counted the record. Allocation-free unless it opens or closes a window (or the key
   * analysis meets a new shard or window).
   */
  record(ts: number, shard: string, count: number, key?: string): void {
    this.sawRecordSinceTick = true;
    this.records++;
    const layout = this.universe.layout;
    const index = this.windows.add(ts, shard, count);
    if (key !== undefined && index >= 0 && this.keys !== null) {
      // Closing a window may have retired ids and moved this shard's index.
      const now = this.universe.layout === layout ? index : this.universe.indexOf(shard);
      this.keys.record(ts, now, key, count);
    }
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
    const now = this.clock();
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

  /** The input ended: closes every open window, the last partial one included. */
  finish(): void {
    this.windows.closeAll();
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

  private judgeWindow(window: ClosedWindow): void {
    this.events.emit('window closed', window);
    const judged = this.judge.judge(window);
    const keys = this.keys?.verdict(window, judged) ?? null;
    const judgement = keys === null ? judged : { ...judged, keys };
    this.events.emit('window judged', { window, judgement });
    for (const incident of judgement.opened) this.events.emit('incident opened', incident);
    for (const incident of judgement.cleared) this.events.emit('incident cleared', incident);
  }
}
