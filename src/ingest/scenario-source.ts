import { setImmediate as nextTurn, setTimeout as sleepFor } from 'node:timers/promises';
import type { CountRecord } from '../window/count-record.js';
import type { SourceItem } from './file-source.js';

/**
 * Records stamped on a tick grid, as a scenario run makes them (a
 * ScenarioRun fits). Kept structural so ingest needs nothing from scenario/.
 */
export interface TickedRecords {
  /** Epoch ms of the first tick. */
  readonly startMs: number;
  /** Exclusive end, epoch ms; may be Infinity. */
  readonly endMs: number;
  /** Reporting interval in ms. */
  readonly tickMs: number;
  /** The records in time order; each call starts again from the first. */
  records(): Iterable<CountRecord>;
}

/** How a scenario's records are released. */
export interface ScenarioSourceOptions {
  /**
   * `real-time`: each tick's records are released when the wall clock passes
   * the tick's end, as live reporters would send them (start the run at
   * about now). `fast`: as fast as they are drawn, for files and tests, with
   * a turn of the event loop between blocks.
   */
  readonly pace: 'real-time' | 'fast';
  /** Wall clock in epoch ms (default Date.now), replaceable in tests. */
  readonly now?: () => number;
  /** Waits the given ms, ending early when the signal aborts (default: a node timer). */
  readonly sleep?: (ms: number, signal: AbortSignal) => Promise<void>;
}

const fastBatchSize = 4096;

/**
 * A built-in simulated cluster as a source, the same shape as a file or
 * Kafka source: the pipeline cannot tell them apart. Every item is a valid
 * record (a scenario makes no bad ones).
 */
export class ScenarioSource implements AsyncIterable<SourceItem> {
  /** The records being replayed. */
  readonly run: TickedRecords;
  private readonly options: ScenarioSourceOptions;
  private readonly stopping = new AbortController();

  /**
   * @param run a seeded scenario run (see runScenario) or any ticked records
   * @param options real-time or fast release; clock and sleep for tests
   */
  constructor(run: TickedRecords, options: ScenarioSourceOptions) {
    this.run = run;
    this.options = options;
  }

  /** Yields the records one by one, paced as configured. */
  async *[Symbol.asyncIterator](): AsyncIterator<SourceItem> {
    for await (const batch of this.batches()) {
      for (const record of batch) yield record;
    }
  }

  /**
   * Yields the records in arrays: one tick's records per array in real time
   * (released at the tick's end), blocks of 4096 when fast.
   */
  async *batches(): AsyncGenerator<CountRecord[], void, undefined> {
    const signal = this.stopping.signal;
    if (this.options.pace === 'fast') {
      let batch: CountRecord[] = [];
      for (const record of this.run.records()) {
        batch.push(record);
        if (batch.length === fastBatchSize) {
          if (signal.aborted) return;
          yield batch;
          batch = [];
          // A turn of the event loop between batches: without it a replay runs on
          // microtasks alone and starves timers and sockets (a /metrics scrape, the keys).
          await nextTurn();
        }
      }
      if (batch.length > 0 && !signal.aborted) yield batch;
      return;
    }
    const now = this.options.now ?? Date.now;
    const sleep = this.options.sleep ?? defaultSleep;
    const tickMs = this.run.tickMs;
    const startMs = this.run.startMs;
    let batch: CountRecord[] = [];
    let releaseAt = Number.NaN;
    for (const record of this.run.records()) {
      const tickEnd = startMs + (Math.floor((record.ts - startMs) / tickMs) + 1) * tickMs;
      if (tickEnd !== releaseAt && batch.length > 0) {
        if (!(await this.waitUntil(releaseAt, now, sleep))) return;
        yield batch;
        batch = [];
      }
      releaseAt = Math.min(tickEnd, this.run.endMs);
      batch.push(record);
    }
    if (batch.length > 0 && (await this.waitUntil(releaseAt, now, sleep))) yield batch;
  }

  /** Stops the source; a pending wait ends at once and iteration finishes. */
  async close(): Promise<void> {
    this.stopping.abort();
  }

  /** Waits until the wall clock reaches `releaseAt`; false when closed meanwhile. */
  private async waitUntil(
    releaseAt: number,
    now: () => number,
    sleep: (ms: number, signal: AbortSignal) => Promise<void>,
  ): Promise<boolean> {
    const signal = this.stopping.signal;
    for (;;) {
      if (signal.aborted) return false;
      const wait = releaseAt - now();
      if (wait <= 0) return true;
      await sleep(wait, signal);
    }
  }
}

async function defaultSleep(ms: number, signal: AbortSignal): Promise<void> {
  try {
    await sleepFor(ms, undefined, { signal });
  } catch (error) {
    if (!signal.aborted) throw error;
  }
}
