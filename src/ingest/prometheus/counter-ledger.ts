import { longestShardId, type RejectionReason } from '../../window/count-record.js';
import type { SourceItem } from '../file-source.js';
import { isWellFormedText } from '../utf8-text.js';

/**
 * Raw samples of one counter series as Prometheus stored them: its label set and its
 * samples in time order (epoch ms, value).
 */
export interface CounterSeries {
  readonly labels: Readonly<Record<string, string>>;
  readonly timestamps: readonly number[];
  readonly values: readonly number[];
}

/** A stretch in which one series had no sample although it had been reporting. */
export interface ScrapeGap {
  /** The series' label set, written as PromQL writes a selector (values escaped). */
  readonly series: string;
  /** Its last sample before the gap, epoch ms. */
  readonly from: number;
  /** Its first sample after the gap, epoch ms; +Infinity while it has not come back. */
  readonly to: number;
}

/** What a judged window rests on, as `coverage` in its verdict. */
export interface CounterCoverage {
  /** Series known when the window was judged. */
  readonly series: number;
  /** Series that had been reporting and had no sample covering part of the window. */
  readonly missing: readonly string[];
  /** False when some series is missing. */
  readonly complete: boolean;
  /** Counter resets inside the window (a drop in value, counted as Prometheus counts them). */
  readonly resets: number;
}

/** How many scrape intervals behind the others a series may fall before it counts as stopped. */
export const stoppedAfterIntervals = 3;

/** Spacings kept per series for its median scrape interval. */
const spacingsKept = 8;

/**
 * Series gone longer than this before a window are no longer listed as missing from it:
 * 5 minutes, Prometheus's default lookback (`--query.lookback-delta`), after which an
 * instant query no longer returns a series that stopped (Prometheus documentation, from
 * memory).
 */
export const forgetStoppedAfterMs = 5 * 60_000;

interface SeriesState {
  readonly name: string;
  /** The shard label's value, or null when the series has none. */
  readonly shard: string | null;
  /** Why its records are rejected whatever their count (missing or unusable shard), else null. */
  readonly shardProblem: RejectionReason | null;
  readonly firstTs: number;
  newestTs: number;
  newestValue: number;
  readonly spacings: number[];
  /** Median of {@link spacings}; NaN until there are two samples. */
  interval: number;
}

interface Pending {
  readonly ts: number;
  readonly item: SourceItem;
}

/**
 * Turns raw samples of request counters into count records, exactly: each increment
 * between consecutive samples of a series becomes one record stamped with the later
 * sample's time, so the records of a stretch add up to the counters' own increase in it
 * and no request is counted twice. A drop in value is a counter reset: the increment is
 * then the new value, as Prometheus's `increase()` and `resets()` treat it (Prometheus
 * documentation, from memory). A series' first sample is only a baseline (its counter's
 * past is unknown), and so is every sample before `emitFrom`.
 *
 * Samples arrive in overlapping reads (each query asks for a little more than is new), so
 * a sample at or before a series' newest one is skipped. Records are held until
 * {@link release}, which gives those up to a bound in time order; {@link scrapedThrough}
 * says how far every live series has been read, so no record can still come before it.
 * A series whose newest sample is more than {@link stoppedAfterIntervals} of its own scrape
 * intervals (its median spacing) behind the newest of all is stopped: it no longer holds
 * the release back, and the windows it leaves uncovered are reported by {@link coverageOf}.
 */
export class CounterLedger {
  private readonly shardLabel: string;
  private readonly series = new Map<string, SeriesState>();
  private pending: Pending[] = [];
  private pendingSorted = true;
  private readonly resetTimes: number[] = [];
  private readonly gapList: ScrapeGap[] = [];
  private readonly stopped = new Set<SeriesState>();
  private newestOfAll = Number.NEGATIVE_INFINITY;
  private resetCount = 0;
  /** Shards that got a record already: a shard's first record is sent even at count 0. */
  private readonly shardsSeen = new Set<string>();

  constructor(shardLabel: string) {
    this.shardLabel = shardLabel;
  }

  /** Series known so far. */
  get seriesCount(): number {
    return this.series.size;
  }

  /** Counter resets seen so far. */
  get resets(): number {
    return this.resetCount;
  }

  /** Scrape gaps closed so far (a series came back), in the order they were seen. */
  get gaps(): readonly ScrapeGap[] {
    return this.gapList;
  }

  /** Records and rejections read and not yet released. */
  get held(): number {
    return this.pending.length;
  }

  /**
   * Takes in one read of raw samples. Samples before `emitFrom` (epoch ms) only set
   * baselines; from it on each increment is a record held for {@link release}.
   * O(samples).
   */
  add(read: readonly CounterSeries[], emitFrom = Number.NEGATIVE_INFINITY): void {
    for (const series of read) this.addSeries(series, emitFrom);
    this.updateStopped();
  }

  private addSeries(read: CounterSeries, emitFrom: number): void {
    const { timestamps, values } = read;
    if (timestamps.length === 0) return;
    const name = seriesName(read.labels);
    let state = this.series.get(name);
    let at = 0;
    if (state === undefined) {
      const shard = read.labels[this.shardLabel];
      state = {
        name,
        shard: shard === undefined || shard === '' ? null : shard,
        shardProblem: shardProblem(shard),
        firstTs: timestamps[0],
        newestTs: timestamps[0],
        newestValue: values[0],
        spacings: [],
        interval: Number.NaN,
      };
      this.series.set(name, state);
      at = 1;
    }
    for (; at < timestamps.length; at++) {
      const ts = timestamps[at];
      if (ts <= state.newestTs) continue;
      const value = values[at];
      const previous = state.newestValue;
      const spacing = ts - state.newestTs;
      if (
        this.stopped.has(state) ||
        (state.interval > 0 && spacing > stoppedAfterIntervals * state.interval)
      ) {
        this.gapList.push({ series: name, from: state.newestTs, to: ts });
        // A series that reports again is live again.
        this.stopped.delete(state);
      }
      this.noteSpacing(state, spacing);
      state.newestTs = ts;
      state.newestValue = value;
      // After a value that is no number the next one is a fresh baseline.
      if (ts < emitFrom || !Number.isFinite(previous)) continue;
      const reset = value < previous;
      if (reset) {
        this.resetCount++;
        this.resetTimes.push(ts);
      }
      this.hold(ts, state, reset ? value : value - previous);
    }
    if (state.newestTs > this.newestOfAll) this.newestOfAll = state.newestTs;
  }

  private hold(ts: number, state: SeriesState, increment: number): void {
    let item: SourceItem;
    if (state.shardProblem !== null) item = { reason: state.shardProblem };
    else if (!Number.isFinite(increment)) item = { reason: 'wrong type' };
    else if (!Number.isSafeInteger(increment)) item = { reason: 'non-integer count' };
    else {
      const shard = state.shard as string;
      if (increment === 0) {
        // Zero adds nothing, but a shard whose counter exists belongs to the universe.
        if (this.shardsSeen.has(shard)) return;
      }
      this.shardsSeen.add(shard);
      item = { ts, shard, count: increment, partition: 0 };
    }
    const last = this.pending.length === 0 ? Number.NEGATIVE_INFINITY : this.pending.at(-1)!.ts;
    if (ts < last) this.pendingSorted = false;
    this.pending.push({ ts, item });
  }

  private noteSpacing(state: SeriesState, spacing: number): void {
    const spacings = state.spacings;
    spacings.push(spacing);
    if (spacings.length > spacingsKept) spacings.shift();
    state.interval = median(spacings);
  }

  /** Marks series that fell too far behind the newest sample of all as stopped. */
  private updateStopped(): void {
    const typical = this.typicalInterval();
    for (const state of this.series.values()) {
      const interval = state.interval > 0 ? state.interval : typical;
      if (!(interval > 0)) continue;
      if (this.newestOfAll - state.newestTs > stoppedAfterIntervals * interval) {
        this.stopped.add(state);
      }
    }
  }

  /** The median of the series' scrape intervals, ms; NaN before any series has two samples. */
  typicalInterval(): number {
    const intervals: number[] = [];
    for (const state of this.series.values()) {
      if (state.interval > 0) intervals.push(state.interval);
    }
    return median(intervals);
  }

  /** The longest scrape interval of a live series, ms; NaN when none is known. */
  longestInterval(): number {
    let longest = Number.NaN;
    for (const state of this.series.values()) {
      if (this.stopped.has(state) || !(state.interval > 0)) continue;
      if (!(state.interval <= longest)) longest = state.interval;
    }
    return longest;
  }

  /**
   * The time through which every live series has been read: the oldest newest sample of
   * a series not stopped; -Infinity before any sample. O(series).
   */
  scrapedThrough(): number {
    let through = Number.POSITIVE_INFINITY;
    for (const state of this.series.values()) {
      if (!this.stopped.has(state) && state.newestTs < through) through = state.newestTs;
    }
    return through === Number.POSITIVE_INFINITY ? Number.NEGATIVE_INFINITY : through;
  }

  /** Held records and rejections stamped at or before `bound`, in time order. */
  release(bound: number): SourceItem[] {
    if (this.pending.length === 0) return [];
    if (!this.pendingSorted) {
      // Array.prototype.sort is stable: one series' records keep their order.
      this.pending.sort((a, b) => a.ts - b.ts);
      this.pendingSorted = true;
    }
    let low = 0;
    let high = this.pending.length;
    while (low < high) {
      const middle = (low + high) >>> 1;
      if (this.pending[middle].ts <= bound) low = middle + 1;
      else high = middle;
    }
    if (low === 0) return [];
    const released = this.pending.slice(0, low).map((held) => held.item);
    this.pending = this.pending.slice(low);
    return released;
  }

  /**
   * Which series a window `[start, end)` lacks: those with a closed gap overlapping it,
   * and those stopped before its end (for {@link forgetStoppedAfterMs} after their last
   * sample); with the resets inside it. Undefined when every series covered it and no
   * counter reset. O(gaps + stopped series + resets).
   */
  coverageOf(start: number, end: number): CounterCoverage | undefined {
    const missing = new Set<string>();
    for (const gap of this.gapList) {
      if (gap.from < end && gap.to > start) missing.add(gap.series);
    }
    for (const state of this.stopped) {
      if (
        state.firstTs < end &&
        state.newestTs < end &&
        start - state.newestTs < forgetStoppedAfterMs
      )
        missing.add(state.name);
    }
    let resets = 0;
    for (const ts of this.resetTimes) if (ts >= start && ts < end) resets++;
    if (missing.size === 0 && resets === 0) return undefined;
    return {
      series: this.series.size,
      missing: [...missing].sort(),
      complete: missing.size === 0,
      resets,
    };
  }

  /**
   * Every stretch without samples of a series that had been reporting, up to `until`:
   * the closed gaps and, for series stopped now, an open one from their last sample.
   * Series gone {@link forgetStoppedAfterMs} before `since` are left out.
   */
  gapsBetween(since: number, until: number): ScrapeGap[] {
    const gaps = this.gapList.filter((gap) => gap.to > since && gap.from < until);
    for (const state of this.stopped) {
      if (state.newestTs < until && since - state.newestTs < forgetStoppedAfterMs) {
        gaps.push({ series: state.name, from: state.newestTs, to: Number.POSITIVE_INFINITY });
      }
    }
    return gaps;
  }

  /** Forgets resets and closed gaps wholly before `before`, so a long run keeps little. */
  forgetBefore(before: number): void {
    let resetsKept = 0;
    while (resetsKept < this.resetTimes.length && this.resetTimes[resetsKept] < before)
      resetsKept++;
    this.resetTimes.splice(0, resetsKept);
    let gapsKept = 0;
    while (gapsKept < this.gapList.length && this.gapList[gapsKept].to < before) gapsKept++;
    this.gapList.splice(0, gapsKept);
  }
}

/** Why records of a series with this shard label value cannot be counted, or null. */
function shardProblem(shard: string | undefined): RejectionReason | null {
  if (shard === undefined || shard === '') return 'missing shard';
  if (!isWellFormedText(shard)) return 'invalid UTF-8';
  if (shard.length > longestShardId) return 'shard id too long';
  return null;
}

/**
 * A label set as PromQL writes a series selector: the metric name, then the other labels
 * sorted by name with their values in double quotes, backslash, quote and line feed
 * escaped (Prometheus documentation, from memory). Example:
 * `cache_requests_total{instance="a:9100",shard="s-1"}`.
 */
export function seriesName(labels: Readonly<Record<string, string>>): string {
  const name = labels.__name__ ?? '';
  const rest = Object.keys(labels)
    .filter((label) => label !== '__name__')
    .sort()
    .map((label) => `${label}="${escapeLabelValue(labels[label])}"`);
  return `${name}{${rest.join(',')}}`;
}

function escapeLabelValue(value: string): string {
  return value.replace(/\\/g, '\\\\').replace(/"/g, '\\"').replace(/\n/g, '\\n');
}

function median(values: readonly number[]): number {
  if (values.length === 0) return Number.NaN;
  const sorted = [...values].sort((a, b) => a - b);
  const middle = sorted.length >> 1;
  return sorted.length % 2 === 1 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
}
