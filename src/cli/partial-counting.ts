import type { RecordSource } from '../ingest/record-source.js';
import type { ClosedWindowParts, PartialCountSink } from '../partials/partial-count-sink.js';
import { feedRecords } from './record-feed.js';

/** Publishes closed windows; resolves once they are acknowledged. */
export type PublishWindows = (
  windows: readonly ClosedWindowParts[],
  epoch: number,
  sourcePartitions: number,
) => Promise<void>;

/** Settings of a {@link PartialCounting} run. */
export interface PartialCountingOptions {
  /** Wall clock, epoch ms (the idle rule). */
  readonly clock?: () => number;
  /** How often due windows are looked for between batches, ms (default 250). */
  readonly tickMs?: number;
}

/**
 * `shardwise count`'s loop: the source's records go through the one record feed into the
 * partial counting sink; after every batch and on a timer, the windows due are published
 * and, once acknowledged, each partition that closed windows is marked judged through
 * its last one, so the source commits below its first record still in an open window.
 * Publishing is serial: a batch is not taken before the publication it made due is done.
 */
export class PartialCounting {
  private readonly source: RecordSource;
  private readonly sink: PartialCountSink;
  private readonly publish: PublishWindows;
  private readonly clock: () => number;
  private readonly tickMs: number;
  private chain: Promise<void> = Promise.resolve();
  private timer: NodeJS.Timeout | null = null;
  private stopping: Promise<void> | null = null;
  private failure: ((error: unknown) => void) | null = null;
  private sourcePartitions = 0;

  constructor(
    source: RecordSource,
    sink: PartialCountSink,
    publish: PublishWindows,
    options: PartialCountingOptions = {},
  ) {
    this.source = source;
    this.sink = sink;
    this.publish = publish;
    this.clock = options.clock ?? Date.now;
    this.tickMs = options.tickMs ?? 250;
  }

  /** Counts until the source ends or {@link stop}; rejects when reading or publishing fails. */
  async run(): Promise<void> {
    const start = await this.source.open();
    this.sourcePartitions = start.partitions;
    const failed = new Promise<never>((_, reject) => {
      this.failure = reject;
    });
    if (this.stopping === null) {
      this.timer = setInterval(() => void this.publishDue().catch(() => undefined), this.tickMs);
    }
    try {
      await Promise.race([
        feedRecords(this.source, start, this.sink, { afterBatch: () => this.publishDue() }),
        failed,
      ]);
      await this.publishDue();
    } finally {
      if (this.timer !== null) clearInterval(this.timer);
      await this.chain.catch(() => undefined);
    }
  }

  /**
   * Stops: no more windows are looked for, the publication under way (and the commits it
   * asks for) completes, then the source closes. Idempotent.
   */
  stop(): Promise<void> {
    this.stopping ??= (async () => {
      if (this.timer !== null) clearInterval(this.timer);
      await this.chain.catch(() => undefined);
      await this.source.close();
    })();
    return this.stopping;
  }

  /** Publishes what is due, after whatever publication is under way. */
  private publishDue(): Promise<void> {
    const next = this.chain.then(async () => {
      if (this.stopping !== null) return;
      const due = this.sink.closeDue(this.clock());
      if (due.windows.length === 0) return;
      await this.publish(due.windows, due.generation, this.sourcePartitions);
      if (!this.sink.isCurrent(due.generation)) return;
      for (const { partition, through } of due.judged) {
        this.source.markJudgedUpTo(through, partition);
      }
    });
    this.chain = next.catch((error: unknown) => this.failure?.(error));
    return next;
  }
}
