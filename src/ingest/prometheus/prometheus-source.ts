import { setTimeout as sleep } from 'node:timers/promises';
import type { ClosedWindow } from '../../window/event-time-window.js';
import { UsageError } from '../../errors/usage-error.js';
import type { SourceItem } from '../file-source.js';
import type { RecordSource, SourceStart } from '../record-source.js';
import { CounterLedger, forgetStoppedAfterMs, type ScrapeGap } from './counter-ledger.js';
import {
  PrometheusQueryError,
  readRangeVector,
  type PrometheusConnection,
} from './prometheus-api.js';

/** What the Prometheus source reads and how. */
export interface PrometheusSourceOptions {
  readonly connection: PrometheusConnection;
  /** `--series`: a PromQL series selector of request counters. */
  readonly selector: string;
  /** `--shard-label`: the label whose value is the shard. */
  readonly shardLabel: string;
  readonly windows: { readonly windowMs: number; readonly hopMs: number };
  /** `review`: the range `[sinceMs, untilMs)` read to its end; absent, `watch` reads live. */
  readonly range?: { readonly sinceMs: number; readonly untilMs: number };
  /** Most samples one query may bring (default 1e6, far under Prometheus's 5e7 `query.max-samples`). */
  readonly samplesPerQuery?: number;
  /** A line for the operator: scrape gaps, counter resets, failed polls, the hold-back. */
  readonly onNote?: (text: string) => void;
  /** `review`: how far the read has come. */
  readonly onProgress?: (text: string) => void;
  /** Wall clock, epoch ms. */
  readonly clock?: () => number;
}

/** How far before `--since` (and before the first window of `watch`) a baseline is looked for. */
const lookbackMs = 5 * 60_000;
/** How often held records are released while live: the pipeline's own tick is 250 ms. */
const releaseStepMs = 200;
/** Longest pause between live polls. */
const longestPollMs = 5_000;
/** Gaps and resets listed one by one in a review note; the rest are counted. */
const listedInNotes = 10;

/**
 * Request counters from a Prometheus server as count records ({@link CounterLedger} turns
 * raw samples into exact increments). `watch` polls every min(window, 5 s) with instant
 * queries of a range vector, and releases records in time order only through the time
 * every live series has been scraped, and no later than a hold-back behind the wall clock
 * (the poll interval plus four of the longest scrape interval plus 1 s): the judging
 * pipeline moves live event time on with the wall clock between records, so releasing in
 * bursts as polls return would make the tail of each burst late. `review` reads its range
 * in chunks sized to stay near {@link PrometheusSourceOptions.samplesPerQuery}.
 */
export class PrometheusSource implements RecordSource {
  readonly label: string;
  readonly live: boolean;
  private readonly options: PrometheusSourceOptions;
  private readonly ledger: CounterLedger;
  private readonly clock: () => number;
  private opened: Promise<SourceStart> | null = null;
  private closed = false;
  private wake: (() => void) | null = null;
  /** Live: the wall time of the last successful poll. */
  private lastPollMs = Number.NaN;
  /** Live: what no release may pass, so releases stay monotone. */
  private releasedThrough = Number.NEGATIVE_INFINITY;
  private resetsSaid = 0;
  private gapsSaid = 0;
  private holdBackMs = Number.NaN;

  constructor(options: PrometheusSourceOptions) {
    this.options = options;
    this.ledger = new CounterLedger(options.shardLabel);
    this.clock = options.clock ?? Date.now;
    this.live = options.range === undefined;
    this.label = `prometheus ${options.connection.url} ${options.selector}`;
  }

  /** The poll interval of a live read, ms. */
  get pollMs(): number {
    return Math.min(this.options.windows.windowMs, longestPollMs);
  }

  open(): Promise<SourceStart> {
    this.opened ??= this.readBaselines().then(() => ({
      partitions: 1,
      backlogPartitions: [],
      judgedThrough: null,
    }));
    return this.opened;
  }

  /**
   * The first read: baselines before `--since` (review), or the samples from the start of
   * the window now open (watch: its records are released, so the first window is whole).
   */
  private async readBaselines(): Promise<void> {
    const { range, windows } = this.options;
    if (range !== undefined) {
      const read = await this.query(lookbackMs, range.sinceMs - 1, true);
      this.ledger.add(read, range.sinceMs);
      return;
    }
    const now = this.clock();
    const firstWindow =
      Math.floor(now / windows.hopMs) * windows.hopMs - windows.windowMs + windows.hopMs;
    const read = await this.query(now - firstWindow + lookbackMs, undefined, true);
    this.ledger.add(read, firstWindow);
    this.lastPollMs = now;
    const interval = this.ledger.longestInterval();
    this.options.onNote?.(
      `prometheus: ${this.ledger.seriesCount} series match ${this.options.selector}` +
        (interval > 0
          ? `, scraped every ${seconds(interval)}; verdicts trail the wall clock by about ${seconds(this.holdBack())} plus the lateness`
          : ''),
    );
  }

  async *batches(): AsyncGenerator<SourceItem[], void, undefined> {
    await this.open();
    if (this.options.range !== undefined) yield* this.readRange(this.options.range);
    else yield* this.readLive();
  }

  private async *readRange(range: {
    sinceMs: number;
    untilMs: number;
  }): AsyncGenerator<SourceItem[], void, undefined> {
    let from = range.sinceMs;
    let chunks = 0;
    while (from < range.untilMs && !this.closed) {
      const to = Math.min(range.untilMs, from + this.chunkMs(range.untilMs - range.sinceMs));
      // time = to - 1 ms: the samples stamped in [from, to).
      const read = await this.query(to - from, to - 1, false);
      this.ledger.add(read, range.sinceMs);
      chunks++;
      this.options.onProgress?.(
        `reading ${this.options.selector}: ${chunks} queries, through ${new Date(to).toISOString()}, ${this.ledger.seriesCount} series`,
      );
      const items = this.ledger.release(to - 1);
      if (items.length > 0) yield items;
      from = to;
    }
    this.sayResets();
    this.sayGaps(this.ledger.gapsBetween(range.sinceMs, range.untilMs));
  }

  /** A chunk that brings about samplesPerQuery samples: series x chunk / scrape interval. */
  private chunkMs(rangeMs: number): number {
    const interval = this.ledger.typicalInterval();
    const series = Math.max(1, this.ledger.seriesCount);
    const samples = this.options.samplesPerQuery ?? 1e6;
    // Without an interval yet (no series with two samples) 1 s: chunks err on the small side.
    const chunk = Math.floor((samples * (interval > 0 ? interval : 1000)) / series);
    return Math.max(1000, Math.min(rangeMs, chunk));
  }

  private async *readLive(): AsyncGenerator<SourceItem[], void, undefined> {
    let nextPoll = this.clock() + this.pollMs;
    while (!this.closed) {
      if (this.clock() >= nextPoll) {
        nextPoll = this.clock() + this.pollMs;
        await this.poll();
        if (this.closed) return;
      }
      const bound = Math.min(this.clock() - this.holdBack(), this.ledger.scrapedThrough());
      if (bound > this.releasedThrough) {
        this.releasedThrough = bound;
        const items = this.ledger.release(bound);
        if (items.length > 0) yield items;
      }
      await this.pause(releaseStepMs);
    }
  }

  /** One live read: everything since the last poll, with a margin for slow scrapes. */
  private async poll(): Promise<void> {
    const now = this.clock();
    const interval = this.ledger.longestInterval();
    const rangeMs = now - this.lastPollMs + 4 * (interval > 0 ? interval : 1000) + 2000;
    let read;
    try {
      read = await this.query(rangeMs, undefined, false);
    } catch (error) {
      if (!(error instanceof PrometheusQueryError)) throw error;
      this.options.onNote?.(
        `prometheus: query failed (${error.message}); trying again in ${seconds(this.pollMs)}`,
      );
      return;
    }
    this.lastPollMs = now;
    this.ledger.add(read);
    this.holdBackMs = Number.NaN;
    this.sayResets();
    const gaps = this.ledger.gapsBetween(now - forgetStoppedAfterMs, now);
    this.sayGaps(gaps);
    this.ledger.forgetBefore(now - forgetStoppedAfterMs - this.options.windows.windowMs * 2);
  }

  /** Poll interval + 4 scrape intervals + 1 s: a stopped series is known stopped by then. */
  private holdBack(): number {
    if (Number.isNaN(this.holdBackMs)) {
      const interval = this.ledger.longestInterval();
      this.holdBackMs = this.pollMs + 4 * (interval > 0 ? interval : 1000) + 1000;
    }
    return this.holdBackMs;
  }

  private sayResets(): void {
    const resets = this.ledger.resets;
    if (resets === this.resetsSaid) return;
    this.options.onNote?.(
      `prometheus: ${resets - this.resetsSaid} counter reset${resets - this.resetsSaid === 1 ? '' : 's'} (a value below the one before, counted from zero as Prometheus does)`,
    );
    this.resetsSaid = resets;
  }

  /** Says each gap once: an open one when it is first seen, not again when it closes. */
  private saidGaps = new Set<string>();
  private sayGaps(gaps: readonly ScrapeGap[]): void {
    const fresh = gaps.filter((gap) => !this.saidGaps.has(`${gap.series} ${gap.from}`));
    if (fresh.length === 0) return;
    for (const gap of fresh) this.saidGaps.add(`${gap.series} ${gap.from}`);
    this.gapsSaid += fresh.length;
    const listed = fresh
      .slice(0, listedInNotes)
      .map(
        (gap) =>
          `${gap.series} from ${new Date(gap.from).toISOString()} ${
            gap.to === Number.POSITIVE_INFINITY ? 'on' : `to ${new Date(gap.to).toISOString()}`
          }`,
      );
    this.options.onNote?.(
      `prometheus: series not scraped (windows in these spans are marked incomplete, judged on partial counts): ${listed.join('; ')}${fresh.length > listed.length ? `; and ${fresh.length - listed.length} more` : ''}`,
    );
  }

  /** A query, its failures named by the option at fault. */
  private async query(rangeMs: number, timeMs: number | undefined, first: boolean) {
    const { connection, selector } = this.options;
    try {
      return await readRangeVector(connection, selector, rangeMs, timeMs);
    } catch (error) {
      if (!(error instanceof PrometheusQueryError)) throw error;
      if (error.failure === 'bad query') {
        throw new UsageError('--series', selector, error.message, { cause: error });
      }
      if (!first && this.live) throw error;
      throw new Error(`--prometheus ${JSON.stringify(connection.url)} ${error.message}`, {
        cause: error,
      });
    }
  }

  private pause(ms: number): Promise<void> {
    return new Promise((resolve) => {
      const timer = setTimeout(() => {
        this.wake = null;
        resolve();
      }, ms);
      this.wake = () => {
        clearTimeout(timer);
        this.wake = null;
        resolve();
      };
    });
  }

  async close(): Promise<void> {
    this.closed = true;
    this.wake?.();
    await sleep(0);
  }

  markJudgedUpTo(): void {}

  backlogged(): boolean {
    return false;
  }

  /** Called once per judged window: an incomplete one is also said, as `watch --merge` says it. */
  coverageOf(window: ClosedWindow): object | undefined {
    const coverage = this.ledger.coverageOf(window.start, window.end);
    if (coverage !== undefined && !coverage.complete) {
      const listed = coverage.missing.slice(0, listedInNotes).join(', ');
      const more = coverage.missing.length - Math.min(coverage.missing.length, listedInNotes);
      this.options.onNote?.(
        `window ${new Date(window.start).toISOString()} judged incomplete: ${coverage.missing.length} of ${coverage.series} series not scraped through it (${listed}${more > 0 ? `, and ${more} more` : ''})`,
      );
    }
    return coverage;
  }

  /** Series and resets seen, for summaries and tests. */
  get account(): { series: number; resets: number; gaps: number } {
    return { series: this.ledger.seriesCount, resets: this.ledger.resets, gaps: this.gapsSaid };
  }
}

function seconds(ms: number): string {
  return `${Number((ms / 1000).toFixed(3))} s`;
}
