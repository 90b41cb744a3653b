import { median as simpleMedian } from 'simple-statistics';
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

/** Held items sorted by packed keys below this many (2^21); positions take 21 bits. */
const indexSpan = 2 ** 21;

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
  /** The last few spacings between samples, ms, oldest first. */
  readonly spacings: number[];
  /** Median of {@link spacings}, NaN until there are two samples; undefined when stale. */
  median: number | undefined;
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
  /**
   * The same series by the label set's JSON text as the answer wrote it: a quick key for
   * the next read (Prometheus writes labels in one order), the canonical name the fallback.
   */
  private readonly byText = new Map<string, SeriesState>();
  /** Held items and their times (rejections carry none of their own), in parallel. */
  private pendingItems: SourceItem[] = [];
  private pendingTimes: number[] = [];
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
    return this.pendingItems.length;
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
    const text = JSON.stringify(read.labels);
    let state = this.byText.get(text);
    let at = 0;
    if (state === undefined) {
      state = this.series.get(seriesName(read.labels));
      if (state !== undefined) this.byText.set(text, state);
    }
    if (state === undefined) {
      const name = seriesName(read.labels);
      const shard = read.labels[this.shardLabel];
      state = {
        name,
        shard: shard === undefined || shard === '' ? null : shard,
        shardProblem: shardProblem(shard),
        firstTs: timestamps[0],
        newestTs: timestamps[0],
        newestValue: values[0],
        spacings: [],
        median: Number.NaN,
      };
      this.series.set(name, state);
      this.byText.set(text, state);
      at = 1;
    }
    // The interval as of the last read: one median per series and read, not per sample.
    const gapAfter = stoppedAfterIntervals * intervalOf(state);
    for (; at < timestamps.length; at++) {
      const ts = timestamps[at];
      if (ts <= state.newestTs) continue;
      const value = values[at];
      const previous = state.newestValue;
      const spacing = ts - state.newestTs;
      if (this.stopped.has(state) || spacing > gapAfter) {
        this.gapList.push({ series: state.name, from: state.newestTs, to: ts });
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
    const times = this.pendingTimes;
    if (times.length > 0 && ts < times[times.length - 1]) this.pendingSorted = false;
    times.push(ts);
    this.pendingItems.push(item);
  }

  private noteSpacing(state: SeriesState, spacing: number): void {
    const spacings = state.spacings;
    spacings.push(spacing);
    if (spacings.length > spacingsKept) spacings.shift();
    // Worked out when asked for: most samples are never asked about.
    state.median = undefined;
  }

  /** Marks series that fell too far behind the newest sample of all as stopped. */
  private updateStopped(): void {
    const typical = this.typicalInterval();
    for (const state of this.series.values()) {
      const interval = intervalOf(state) > 0 ? intervalOf(state) : typical;
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
      const interval = intervalOf(state);
      if (interval > 0) intervals.push(interval);
    }
    return median(intervals);
  }

  /** The longest scrape interval of a live series, ms; NaN when none is known. */
  longestInterval(): number {
    let longest = Number.NaN;
    for (const state of this.series.values()) {
      const interval = intervalOf(state);
      if (this.stopped.has(state) || !(interval > 0)) continue;
      if (!(interval <= longest)) longest = interval;
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
    if (this.pendingItems.length === 0) return [];
    if (!this.pendingSorted) this.sortPending();
    const times = this.pendingTimes;
    let low = 0;
    let high = times.length;
    while (low < high) {
      const middle = (low + high) >>> 1;
      if (times[middle] <= bound) low = middle + 1;
      else high = middle;
    }
    if (low === 0) return [];
    const released = this.pendingItems.slice(0, low);
    this.pendingItems = this.pendingItems.slice(low);
    this.pendingTimes = times.slice(low);
    return released;
  }

  /** Sorts the held items by time; ties keep their order (one series' records stay in order). */
  private sortPending(): void {
    const times = this.pendingTimes;
    const count = times.length;
    let oldest = Number.POSITIVE_INFINITY;
    let newest = Number.NEGATIVE_INFINITY;
    for (let at = 0; at < count; at++) {
      if (times[at] < oldest) oldest = times[at];
      if (times[at] > newest) newest = times[at];
    }
    let order: Uint32Array;
    if (count < indexSpan && newest - oldest < 2 ** 31) {
      // Time since the oldest and position packed in one exact double (< 2^52): a native
      // numeric sort, several times faster than a comparator, ties broken by position.
      const keys = new Float64Array(count);
      for (let at = 0; at < count; at++) keys[at] = (times[at] - oldest) * indexSpan + at;
      keys.sort();
      order = new Uint32Array(count);
      for (let at = 0; at < count; at++) order[at] = keys[at] % indexSpan;
    } else {
      order = new Uint32Array(count);
      for (let at = 0; at < count; at++) order[at] = at;
      order.sort((a, b) => times[a] - times[b] || a - b);
    }
    const items = this.pendingItems;
    this.pendingItems = Array.from(order, (at) => items[at]);
    this.pendingTimes = Array.from(order, (at) => times[at]);
    this.pendingSorted = true;
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

  /**
   * Forgets resets and closed gaps wholly before `before`, and series stopped since before
   * it (instances come and go: a long run must not keep every series it ever saw). A
   * forgotten series that comes back starts again from a baseline. O(series).
   */
  forgetBefore(before: number): void {
    for (const state of this.stopped) {
      if (state.newestTs >= before) continue;
      this.stopped.delete(state);
      this.series.delete(state.name);
    }
    for (const [text, state] of this.byText) {
      if (this.series.get(state.name) !== state) this.byText.delete(text);
    }
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

/** A series' scrape interval: the median of its recent spacings, ms; NaN before two samples. */
function intervalOf(state: SeriesState): number {
  state.median ??= median(state.spacings);
  return state.median;
}

/**
 * simple-statistics' median (R type 7: the mean of the middle two of an even count), which
 * throws on none. The spacings are whole milliseconds (prometheus-api.ts rounds the
 * timestamps), so its a + (b - a) / 2 is exactly (a + b) / 2.
 */
function median(values: readonly number[]): number {
  return values.length === 0 ? Number.NaN : simpleMedian(values as number[]);
}
