import type { SourceReading, SourceState } from './view-model.js';

/** Running totals of a source, as the pipeline keeps them. */
export interface SourceTotals {
  /** Records read so far (counted or rejected). */
  readonly records: number;
  /** Requests those records carry (their counts; 1 per request event). */
  readonly requests: number;
  readonly rejected: number;
  /** Units of load that arrived after their window had closed. */
  readonly late: number;
  /** Event time of the newest record read, epoch ms; NaN before any. */
  readonly newestEventTs: number;
}

/** Readings closer together than this are merged, so memory stays bounded at any record rate. */
const sampleEveryMs = 250;

/**
 * Measures a source for the screen: requests and records per second over a trailing span, how far the
 * newest record's time trails the clock, and how long since a record arrived. Fed with
 * running totals once per batch, so the cost is O(1) per batch, never per record.
 */
export class SourceMeter {
  private readonly clock: () => number;
  private readonly spanMs: number;
  /** Running totals at `at`; `opened` is when the sample began taking merged readings. */
  private readonly samples: { opened: number; at: number; records: number; requests: number }[] =
    [];
  private totals: SourceTotals = {
    records: 0,
    requests: 0,
    rejected: 0,
    late: 0,
    newestEventTs: Number.NaN,
  };
  private lastArrival = Number.NaN;
  private activeState: SourceState;
  private quiet = false;
  private ended = false;

  /**
   * @param initial the state before anything is read (`reading` for files and scenarios,
   *   `connecting` for a broker)
   * @param clock wall clock, epoch ms
   * @param spanMs the span the rates are averaged over
   */
  constructor(initial: SourceState = 'reading', clock: () => number = Date.now, spanMs = 5000) {
    this.activeState = initial;
    this.clock = clock;
    this.spanMs = spanMs;
  }

  /** New running totals after a batch. */
  progress(totals: SourceTotals): void {
    const now = this.clock();
    if (totals.records > this.totals.records) {
      this.lastArrival = now;
      this.quiet = false;
    }
    this.totals = totals;
    const last = this.samples.at(-1);
    if (last !== undefined && now - last.opened < sampleEveryMs) {
      last.at = now;
      last.records = totals.records;
      last.requests = totals.requests;
    } else {
      this.samples.push({
        opened: now,
        at: now,
        records: totals.records,
        requests: totals.requests,
      });
    }
    // The oldest sample kept is the newest one at least a span old, so the rate covers the span.
    while (this.samples.length > 2 && now - this.samples[1].at >= this.spanMs) this.samples.shift();
  }

  /** A connection state reported by the source (a broker connecting, connected, lost). */
  connection(state: 'connecting' | 'connected' | 'disconnected'): void {
    this.activeState = state;
  }

  /** The source has been quiet for longer than a window plus the lateness. */
  stalled(): void {
    this.quiet = true;
  }

  /** The source was read to its end. */
  end(): void {
    this.ended = true;
  }

  /** The source as of now. */
  reading(): SourceReading {
    const now = this.clock();
    const state: SourceState = this.ended ? 'ended' : this.quiet ? 'quiet' : this.activeState;
    return {
      state,
      requestsPerSecond: this.rate(now, 'requests'),
      recordsPerSecond: this.rate(now, 'records'),
      lagMs: Number.isNaN(this.totals.newestEventTs) ? null : now - this.totals.newestEventTs,
      lastRecordAgeMs: Number.isNaN(this.lastArrival) ? null : now - this.lastArrival,
      records: this.totals.records,
      rejected: this.totals.rejected,
      late: this.totals.late,
    };
  }

  private rate(now: number, of: 'records' | 'requests'): number | null {
    if (this.samples.length === 0) return null;
    const last = this.samples[this.samples.length - 1];
    if (now - last.at > this.spanMs) return 0;
    const first = this.samples[0];
    const elapsed = now - first.at;
    if (this.samples.length < 2 || elapsed <= 0) return null;
    return ((last[of] - first[of]) * 1000) / elapsed;
  }
}
