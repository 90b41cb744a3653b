import { Counter, Gauge, type Registry } from 'prom-client';
import type { SourceItem } from '../ingest/file-source.js';
import type { RecordSource, SourceStart } from '../ingest/record-source.js';
import { KafkaSummaryReader } from '../ingest/kafka/summary-reader.js';
import type { KafkaConnectionOptions } from '../ingest/kafka/connection.js';
import type { JudgingPipeline } from '../judge/judging-pipeline.js';
import { WindowMerge, type MergedWindow, type WindowCoverage } from '../partials/window-merge.js';
import type { RejectionReason } from '../window/count-record.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import { countsOfClosedWindow, ShardRetirement } from '../window/shard-retirement.js';
import type { ShardUniverse } from '../window/shard-universe.js';

/** What `watch --merge` needs besides the judge. */
export interface MergeSettings {
  readonly connection: KafkaConnectionOptions;
  /** `--merge`: the summary topic. */
  readonly topic: string;
  readonly groupId: string | undefined;
  readonly from: 'earliest' | 'latest';
  /** `--merge-deadline`, ms. */
  readonly deadlineMs: number;
}

/** How often pending windows are checked for completeness and deadlines. */
const mergePollMs = 250;

/**
 * The source of `watch --merge`: reads partial summaries from the summary topic, puts
 * windows together ({@link WindowMerge}) and hands each to the judging pipeline as a
 * closed window, so screen, metrics and recording see it as any other. Its
 * {@link batches} yield nothing but an empty array per poll that released windows (the
 * screen redraws on batches); they end on {@link close}.
 */
export class SummaryMergeSource implements RecordSource {
  readonly topic: string;
  readonly label: string;
  readonly live = true;
  private readonly reader: KafkaSummaryReader;
  private readonly settings: MergeSettings;
  private readonly universe: ShardUniverse;
  /** A growing universe retires ids that stopped reporting as each window is judged. */
  private readonly retirement: ShardRetirement | null;
  private readonly pipeline: JudgingPipeline;
  private readonly windowMs: number;
  private merge: WindowMerge | null = null;
  private readonly coverages = new WeakMap<ClosedWindow, WindowCoverage>();
  private resumedThrough: number | null = null;
  private readonly outcomes = { merged: 0, duplicate: 0, afterVerdict: 0, refused: 0 };
  private stop: (() => void) | null = null;
  private closed = false;
  private readonly onIncomplete: (window: MergedWindow) => void;
  private readonly onRefused: (reason: string) => void;

  constructor(options: {
    readonly settings: MergeSettings;
    readonly universe: ShardUniverse;
    readonly pipeline: JudgingPipeline;
    readonly windowMs: number;
    readonly onIncomplete: (window: MergedWindow) => void;
    readonly onRefused: (reason: string) => void;
  }) {
    this.settings = options.settings;
    this.topic = options.settings.topic;
    this.label = `summaries on ${options.settings.topic}`;
    this.universe = options.universe;
    this.retirement = options.universe.declared ? null : new ShardRetirement(options.universe);
    this.pipeline = options.pipeline;
    this.windowMs = options.windowMs;
    this.onIncomplete = options.onIncomplete;
    this.onRefused = options.onRefused;
    this.reader = new KafkaSummaryReader({
      ...options.settings.connection,
      topic: options.settings.topic,
      groupId: options.settings.groupId,
      from: options.settings.from,
      onSummary: (summary) => {
        const outcome = this.merge!.add(summary, Date.now());
        if (outcome.refused !== undefined) {
          this.outcomes.refused++;
          this.onRefused(outcome.refused);
          return;
        }
        this.outcomes.merged += outcome.merged;
        this.outcomes.duplicate += outcome.duplicates;
        this.outcomes.afterVerdict += outcome.afterVerdict;
      },
      onRefused: (reason) => {
        this.outcomes.refused++;
        this.onRefused(reason);
      },
    });
  }

  /** Connects (see {@link connect}); a summary topic counts as one source partition. */
  async open(): Promise<SourceStart> {
    const judgedThrough = this.merge === null ? await this.connect() : this.resumedThrough;
    return { partitions: 1, backlogPartitions: [], judgedThrough };
  }

  /** Windows are put together from summaries: no partition of records is behind. */
  backlogged(): boolean {
    return false;
  }

  /** Connects; resolves to the end of the last window a previous run on the group judged. */
  async connect(): Promise<number | null> {
    const judgedThrough = await this.reader.connect();
    this.resumedThrough = judgedThrough;
    this.merge = new WindowMerge({
      windowMs: this.windowMs,
      deadlineMs: this.settings.deadlineMs,
      ...(judgedThrough === null ? {} : { judgedThrough }),
    });
    return judgedThrough;
  }

  /** The coverage of a window this source handed to the pipeline. */
  coverageOf(window: ClosedWindow): WindowCoverage | undefined {
    return this.coverages.get(window);
  }

  /** Summaries' parts by what became of them. */
  get partOutcomes(): Readonly<typeof this.outcomes> {
    return this.outcomes;
  }

  markJudgedUpTo(windowEnd: number): void {
    this.reader.markJudgedUpTo(windowEnd);
  }

  async *batches(): AsyncGenerator<SourceItem[], void, undefined> {
    if (this.merge === null) await this.connect();
    await this.reader.start();
    try {
      while (!this.closed) {
        await new Promise<void>((resolve) => {
          const timer = setTimeout(resolve, mergePollMs);
          this.stop = () => {
            clearTimeout(timer);
            resolve();
          };
        });
        if (this.closed) break;
        const released = this.merge!.due(Date.now());
        for (const merged of released) this.judge(merged);
        if (released.length > 0) yield [];
      }
    } finally {
      await this.reader.close();
    }
  }

  close(): Promise<void> {
    this.closed = true;
    this.stop?.();
    return Promise.resolve();
  }

  private judge(merged: MergedWindow): void {
    const rejected: Partial<Record<RejectionReason, number>> = { ...merged.rejected };
    const { counts, total, outside, tooMany } = countsOfClosedWindow(
      this.universe,
      this.retirement,
      Math.floor(merged.start / this.windowMs),
      merged.counts,
    );
    if (outside > 0) rejected['outside universe'] = (rejected['outside universe'] ?? 0) + outside;
    if (tooMany > 0) rejected['too many shards'] = (rejected['too many shards'] ?? 0) + tooMany;
    const window: ClosedWindow = {
      start: merged.start,
      end: merged.end,
      counts,
      total,
      late: merged.late,
      rejected,
    };
    this.coverages.set(window, merged.coverage);
    if (!merged.coverage.complete) this.onIncomplete(merged);
    this.pipeline.judgeClosed(window);
  }
}

/** The metrics of `watch --merge`, on the exporter's own registry. */
export class MergeMetrics {
  private readonly windows: Counter<'coverage'>;
  private readonly missing: Gauge;
  private readonly parts: Counter<'outcome'>;
  /** What `parts` has been advanced to, per outcome (the source's counts only grow). */
  private readonly countedParts = { merged: 0, duplicate: 0, afterVerdict: 0, refused: 0 };

  constructor(registry: Registry, source: SummaryMergeSource) {
    this.windows = new Counter({
      name: 'shardwise_merged_windows_total',
      help: 'Windows put together from partial summaries, by coverage (complete or incomplete).',
      labelNames: ['coverage'],
      registers: [registry],
    });
    this.missing = new Gauge({
      name: 'shardwise_window_missing_partitions',
      help: 'Source partitions whose partial summary had not arrived when the newest window was judged.',
      registers: [registry],
    });
    const counted = this.countedParts;
    const labels = {
      merged: 'merged',
      duplicate: 'duplicate',
      afterVerdict: 'after_verdict',
      refused: 'refused',
    } as const;
    this.parts = new Counter({
      name: 'shardwise_partial_parts_total',
      help: 'Partition parts of partial summaries read, by outcome (merged, duplicate, after_verdict, refused).',
      labelNames: ['outcome'],
      registers: [registry],
      collect() {
        const outcomes = source.partOutcomes;
        for (const outcome of Object.keys(labels) as (keyof typeof labels)[]) {
          const gain = outcomes[outcome] - counted[outcome];
          // Zero is shown too, so every outcome has its series from the start.
          this.inc({ outcome: labels[outcome] }, Math.max(gain, 0));
          counted[outcome] = Math.max(outcomes[outcome], counted[outcome]);
        }
      },
    });
  }

  /** Called for each judged window with its coverage. */
  observe(coverage: WindowCoverage): void {
    this.windows.inc({ coverage: coverage.complete ? 'complete' : 'incomplete' });
    this.missing.set(coverage.missing.length);
  }
}
