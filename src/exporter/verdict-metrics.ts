import { Counter, Gauge, Histogram, Registry } from 'prom-client';
import { registerProcessMetrics } from './process-metrics.js';
import type { JudgeSettings } from '../judge/judge-settings.js';
import type { Judgement } from '../judge/judgement.js';
import type { PipelineEvents } from '../judge/pipeline-events.js';
import type { RejectionReason } from '../window/count-record.js';
import type { WindowTotals } from '../window/event-time-window.js';
import {
  findingLabels,
  pValueTests,
  recordOutcomes,
  rejectionReasonLabels,
  shardLabel,
  type PValueTest,
  type RecordOutcome,
} from './metric-labels.js';
import { readiness, type Readiness } from './readiness.js';

/** What the exporter reads of a judging pipeline: its events, and its totals at scrape time. */
export interface ObservedPipeline {
  readonly events: PipelineEvents;
  readonly totals: WindowTotals & { readonly recordsSeen: number };
}

export interface VerdictMetricsOptions {
  /** The judge's settings: the null model, spread mode, alpha and persistence in use. */
  readonly settings: JudgeSettings;
  /** `--window`, ms. */
  readonly windowMs: number;
  /** `--lateness`, ms. */
  readonly latenessMs: number;
  /** Wall clock, epoch ms (default Date.now). */
  readonly clock?: () => number;
  /** Monotonic clock in ms for the judging time (default performance.now). */
  readonly timer?: () => number;
}

/** Every metric name this exporter defines, without the standard process metrics. */
export const verdictMetricNames = [
  'shardwise_judge_info',
  'shardwise_judge_alpha',
  'shardwise_window_length_seconds',
  'shardwise_window_lateness_seconds',
  'shardwise_window_requests',
  'shardwise_window_shards',
  'shardwise_fullest_shard_relative_load',
  'shardwise_emptiest_shard_relative_load',
  'shardwise_chance_ceiling_relative_load',
  'shardwise_chance_floor_relative_load',
  'shardwise_window_p_value',
  'shardwise_empty_shards',
  'shardwise_empty_shards_expected',
  'shardwise_dispersion_index',
  'shardwise_effective_placements',
  'shardwise_window_spread_robust',
  'shardwise_finding',
  'shardwise_open_incidents',
  'shardwise_false_incidents_expected_per_day',
  'shardwise_flagged_shard_relative_load',
  'shardwise_flagged_shard_p_value',
  'shardwise_incident_open',
  'shardwise_records_total',
  'shardwise_rejected_records_total',
  'shardwise_windows_closed_total',
  'shardwise_shards_retired_total',
  'shardwise_window_judging_duration_seconds',
  'shardwise_source_lag_seconds',
  'shardwise_source_stalled',
  'shardwise_last_window_end_timestamp_seconds',
  'shardwise_keyed_requests',
  'shardwise_distinct_keys',
  'shardwise_key_p_value',
  'shardwise_key_causes',
] as const;

/** `test` label of `shardwise_key_p_value`. */
const keyPValueTests = ['key_fullest', 'key_emptiest', 'replacement'] as const;
/** `cause` label of `shardwise_key_causes`: the verdict stream's causes, spaces as `_`. */
const keyCauseLabels = { 'hot key': 'hot_key', placement: 'placement', moved: 'moved' } as const;

/**
 * Judging time buckets, seconds: a 64-shard window takes about 10 ms, a weighted one of
 * 1e5 shards about 30 s (docs/performance.md).
 */
const judgingBuckets = [
  0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60,
];

/** Labels every gauge about the latest window carries: the null model and spread mode. */
type ModelLabel = 'null' | 'spread';

/**
 * The verdicts as Prometheus metrics, on a registry of its own (never prom-client's global
 * one) that also holds the standard process metrics. Subscribes to the pipeline's
 * "window closed", "window judged" and "source stalled" events; record counts are read
 * from the pipeline's totals when scraped, so per-record work stays zero.
 *
 * Series are bounded whatever the input: every label takes values from a fixed set except
 * `shard`, which only `shardwise_flagged_shard_relative_load` and
 * `shardwise_flagged_shard_p_value` (at most `--max-flagged` shards of the latest window;
 * series of shards no longer flagged are removed) and `shardwise_incident_open` (at most
 * `--max-flagged` open incidents; removed when the incident clears) have, with ids
 * sanitized and cut by {@link shardLabel}.
 *
 * Gauges about the latest window carry `null` and `spread` (the settings in use) and are
 * absent until the first window is judged; a value the window does not have (the
 * emptiest shard's p-value with the cold tests off, anything of a window without
 * requests) is absent too, never a made-up 0.
 */
export class VerdictMetrics {
  readonly registry = new Registry();
  private readonly pipeline: ObservedPipeline;
  private readonly clock: () => number;
  private readonly timer: () => number;
  private readonly hopMs: number;
  private readonly latenessMs: number;
  private readonly model: Record<ModelLabel, string>;
  private readonly unsubscribe: (() => void)[] = [];
  private readonly startedAt: number;
  private lastJudgedAt = Number.NaN;
  /** When each window awaiting its verdict closed, oldest first (verdicts come in close order). */
  private readonly closedAt: number[] = [];
  private stalledAtRecords = -1;
  private readonly maxFlagged: number;
  private flaggedSeries = new Map<string, { shard: string; finding: string }>();
  private incidentSeries = new Map<string, { shard: string; finding: string; test: string }>();
  private countedRecords: Record<RecordOutcome, number> = { accepted: 0, rejected: 0, late: 0 };
  private countedRejections: Partial<Record<RejectionReason, number>> = {};
  /** Texts of the metrics that change only when a window is judged, by name (see render). */
  private readonly windowTexts = new Map<string, string>();
  /** Names of the metrics that change only when a window is judged (or never). */
  private readonly windowNames: ReadonlySet<string>;
  /** Bumped whenever the window metrics change; a render begun before keeps no text. */
  private generation = 0;

  private readonly keyedRequests: Gauge<ModelLabel>;
  private readonly distinctKeys: Gauge<ModelLabel>;
  private readonly keyPValue: Gauge<ModelLabel | 'test'>;
  private readonly keyCauses: Gauge<ModelLabel | 'cause'>;
  private readonly requests: Gauge<ModelLabel>;
  private readonly shards: Gauge<ModelLabel>;
  private readonly fullest: Gauge<ModelLabel>;
  private readonly emptiest: Gauge<ModelLabel>;
  private readonly ceiling: Gauge<ModelLabel>;
  private readonly floor: Gauge<ModelLabel>;
  private readonly pValue: Gauge<ModelLabel | 'test'>;
  private readonly emptyShards: Gauge<ModelLabel>;
  private readonly emptyExpected: Gauge<ModelLabel>;
  private readonly dispersion: Gauge<ModelLabel>;
  private readonly effective: Gauge<ModelLabel>;
  private readonly robust: Gauge<ModelLabel>;
  private readonly finding: Gauge<ModelLabel | 'finding'>;
  private readonly incidents: Gauge<ModelLabel | 'finding'>;
  private readonly falseIncidents: Gauge<ModelLabel>;
  private readonly flagged: Gauge<ModelLabel | 'shard' | 'finding'>;
  private readonly flaggedP: Gauge<ModelLabel | 'shard' | 'finding'>;
  private readonly incidentOpen: Gauge<ModelLabel | 'shard' | 'finding' | 'test'>;
  private readonly records: Counter<'outcome'>;
  private readonly rejections: Counter<'reason'>;
  private readonly windowsClosed: Counter;
  private readonly shardsRetired: Counter;
  private readonly judgingTime: Histogram;
  private readonly lag: Gauge;
  private readonly stalled: Gauge;
  private readonly lastWindowEnd: Gauge;

  /**
   * @param pipeline the judging pipeline to observe (its events and totals)
   * @param options the settings in use and the clocks
   */
  constructor(pipeline: ObservedPipeline, options: VerdictMetricsOptions) {
    this.pipeline = pipeline;
    this.clock = options.clock ?? Date.now;
    this.timer = options.timer ?? (() => performance.now());
    this.hopMs = options.settings.hopMs;
    this.latenessMs = options.latenessMs;
    this.maxFlagged = options.settings.maxFlagged;
    this.startedAt = this.clock();
    const settings = options.settings;
    this.model = { null: settings.null, spread: settings.spread };
    const registers = [this.registry];
    registerProcessMetrics(this.registry);

    const info = new Gauge({
      name: 'shardwise_judge_info',
      help: 'Always 1; the labels are the judge settings in use: null model, spread mode (the setting; see shardwise_window_spread_robust), alpha, --confirm and --clear windows',
      labelNames: ['null', 'spread', 'alpha', 'confirm', 'clear'],
      registers,
    });
    info.set(
      {
        ...this.model,
        alpha: String(settings.alpha),
        confirm: String(settings.confirm),
        clear: String(settings.clear),
      },
      1,
    );
    new Gauge({
      name: 'shardwise_judge_alpha',
      help: 'Significance level of every test (--alpha)',
      registers,
    }).set(settings.alpha);
    new Gauge({
      name: 'shardwise_window_length_seconds',
      help: 'Window length (--window), seconds',
      registers,
    }).set(options.windowMs / 1000);
    new Gauge({
      name: 'shardwise_window_lateness_seconds',
      help: 'How long windows wait for late records (--lateness), seconds',
      registers,
    }).set(options.latenessMs / 1000);

    // Every gauge of the latest window carries the model labels, some a few labels more.
    const windowGauge = <More extends string = never>(
      name: string,
      help: string,
      more: readonly More[] = [],
    ) =>
      new Gauge<ModelLabel | More>({
        name,
        help,
        labelNames: ['null', 'spread', ...more],
        registers,
      });
    this.requests = windowGauge(
      'shardwise_window_requests',
      'Requests (N) counted in the latest closed window',
    );
    this.shards = windowGauge('shardwise_window_shards', 'Shards (m) the latest window judged');
    this.fullest = windowGauge(
      'shardwise_fullest_shard_relative_load',
      'Relative load x / (N p) of the fullest shard in the latest window; 1 is the fair share',
    );
    this.emptiest = windowGauge(
      'shardwise_emptiest_shard_relative_load',
      'Relative load x / (N p) of the emptiest shard in the latest window',
    );
    this.ceiling = windowGauge(
      'shardwise_chance_ceiling_relative_load',
      'Chance ceiling: the (1 - alpha) quantile of the fullest shard relative load under random placement; also the smallest hotspot the window could show',
    );
    this.floor = windowGauge(
      'shardwise_chance_floor_relative_load',
      'Chance floor: the alpha quantile of the emptiest shard relative load under random placement (absent with the cold tests off)',
    );
    this.pValue = windowGauge(
      'shardwise_window_p_value',
      'p-values of the latest window under the null model: test=fullest P(max r >= observed), emptiest P(min r <= observed), empty_shards P(E >= observed), spread (dispersion); statistical evidence, not certainty',
      ['test'],
    );
    this.emptyShards = windowGauge(
      'shardwise_empty_shards',
      'Shards with no request in the latest window',
    );
    this.emptyExpected = windowGauge(
      'shardwise_empty_shards_expected',
      'Empty shards expected under random placement: sum of (1 - p_i)^N',
    );
    this.dispersion = windowGauge(
      'shardwise_dispersion_index',
      'Dispersion index phi = X^2 / (m - 1) of the latest window against the null shares; 1 under random placement',
    );
    this.effective = windowGauge(
      'shardwise_effective_placements',
      'N_eff = N / max(phi, 1): independent placements the latest window is worth',
    );
    this.robust = windowGauge(
      'shardwise_window_spread_robust',
      '1 when the latest window was judged against the robust spread (counts divided by the general dispersion), 0 when exact',
    );
    this.finding = windowGauge(
      'shardwise_finding',
      'Findings of the latest window, 1 when it holds: hotspot, cold, uneven, chance, too_little_traffic',
      ['finding'],
    );
    this.incidents = windowGauge(
      'shardwise_open_incidents',
      'Shards whose finding (hotspot or cold) has held for --confirm consecutive windows and not yet cleared',
      ['finding'],
    );
    this.falseIncidents = windowGauge(
      'shardwise_false_incidents_expected_per_day',
      'About windows per day x alpha^confirm: incidents a day random placement alone would open (an approximation)',
    );
    this.flagged = windowGauge(
      'shardwise_flagged_shard_relative_load',
      'Relative load of each shard flagged in the latest window (at most --max-flagged; shard ids sanitized, see docs/metrics.md); the series goes away when the shard is no longer flagged',
      ['shard', 'finding'],
    );
    this.flaggedP = windowGauge(
      'shardwise_flagged_shard_p_value',
      'Adjusted p-value of each shard flagged in the latest window: P(max r >= its r) for a hotspot, P(min r <= its r) for a cold shard, under the null model (same series as shardwise_flagged_shard_relative_load); statistical evidence, not certainty',
      ['shard', 'finding'],
    );
    this.incidentOpen = windowGauge(
      'shardwise_incident_open',
      'Always 1, one series per open incident (hotspot or cold) naming its shard and the test that opened it (window or cusum); at most --max-flagged, those flagged in the latest window first, then the longest open; the series goes away when the incident clears',
      ['shard', 'finding', 'test'],
    );
    this.keyedRequests = windowGauge(
      'shardwise_keyed_requests',
      'Requests of the latest window that carried a key (absent when none did)',
    );
    this.distinctKeys = windowGauge(
      'shardwise_distinct_keys',
      'Distinct keys of the latest window summed over its shards: exact up to registers/16 per shard, then HyperLogLog with standard error 1.04/sqrt(registers)',
    );
    this.keyPValue = windowGauge(
      'shardwise_key_p_value',
      'Key tests of the latest window: test=key_fullest / key_emptiest P(max or min keys per shard this extreme) for K keys placed at random, replacement the Monte Carlo P(fullest load >= observed) were the observed key weights placed at random (absent without a hot shard)',
      ['test'],
    );
    this.keyCauses = windowGauge(
      'shardwise_key_causes',
      'Shards of the latest window given each cause: hot_key (one key carries at least half the excess), placement (excess spread over many keys, or keys per shard off), moved (a cold shard lost what a hot one gained)',
      ['cause'],
    );
    this.records = new Counter({
      name: 'shardwise_records_total',
      help: 'Records read, by outcome: accepted (counted in every window it belongs to), late (missed a window that had closed), rejected (failed validation)',
      labelNames: ['outcome'],
      registers,
      collect: () => this.syncTotals(),
    });
    this.rejections = new Counter({
      name: 'shardwise_rejected_records_total',
      help: 'Records not counted, by reason (too_late ones are outcome="late" in shardwise_records_total)',
      labelNames: ['reason'],
      registers,
      collect: () => this.syncTotals(),
    });
    for (const outcome of recordOutcomes) this.records.inc({ outcome }, 0);
    for (const reason of Object.values(rejectionReasonLabels)) this.rejections.inc({ reason }, 0);
    this.windowsClosed = new Counter({
      name: 'shardwise_windows_closed_total',
      help: 'Windows closed and judged',
      registers,
    });
    this.shardsRetired = new Counter({
      name: 'shardwise_shards_retired_total',
      help: 'Shard ids a growing universe (no --shards or --shard-map) retired because they stopped reporting: they left m, and their room went to ids that report later',
      registers,
    });
    this.judgingTime = new Histogram({
      name: 'shardwise_window_judging_duration_seconds',
      help: 'Time from a window closing to its verdict (judging, and waiting for the judging thread), seconds',
      buckets: judgingBuckets,
      registers,
    });
    this.lag = new Gauge({
      name: 'shardwise_source_lag_seconds',
      help: 'Wall-clock time when the latest window was judged minus its end (event time), seconds: how far the verdicts trail the traffic, --lateness included; NaN before the first window',
      registers,
    });
    this.lag.set(Number.NaN);
    this.stalled = new Gauge({
      name: 'shardwise_source_stalled',
      help: '1 while a live source has sent nothing for longer than a window plus the lateness (windows then close on the wall clock), else 0',
      registers,
      collect: () => this.syncStalled(),
    });
    this.lastWindowEnd = new Gauge({
      name: 'shardwise_last_window_end_timestamp_seconds',
      help: 'End of the latest closed window, Unix time in seconds; 0 before the first',
      registers,
    });

    // Read at scrape time: process metrics, record totals, the stall flag. Metrics others
    // register on this registry later (watch --merge) are not in the set either.
    const live = [
      'shardwise_records_total',
      'shardwise_rejected_records_total',
      'shardwise_source_stalled',
    ];
    this.windowNames = new Set(
      this.registry
        .getMetricsAsArray()
        .map((metric) => metric.name)
        .filter((name) => !name.startsWith('process_') && !live.includes(name)),
    );

    const events = pipeline.events;
    this.unsubscribe.push(
      events.on('window closed', () => {
        this.closedAt.push(this.timer());
      }),
      events.on('window judged', ({ window, judgement }) => {
        const closedAt = this.closedAt.shift();
        if (closedAt !== undefined) {
          this.judgingTime.observe(Math.max(this.timer() - closedAt, 0) / 1000);
        }
        this.show(judgement);
        this.windowsClosed.inc();
        this.shardsRetired.inc(judgement.retiredShards ?? 0);
        this.lastWindowEnd.set(window.end / 1000);
        const now = this.clock();
        this.lastJudgedAt = now;
        this.lag.set((now - window.end) / 1000);
        this.syncStalled();
        this.invalidate();
      }),
      events.on('source stalled', () => {
        this.stalledAtRecords = this.pipeline.totals.recordsSeen;
        this.stalled.set(1);
      }),
    );
  }

  /**
   * The exposition text of `/metrics`, the same as `registry.metrics()`, but the metrics
   * about windows (every gauge, counter and histogram set when a window is judged, and the
   * settings) are rendered once per judged window and kept; only the process metrics, the
   * record totals and the stall flag (read at scrape time) and metrics registered by others
   * are rendered afresh. A scrape then costs a few small renders, whatever the window held.
   */
  async render(): Promise<string> {
    const generation = this.generation;
    const parts: string[] = [];
    for (const metric of this.registry.getMetricsAsArray()) {
      const name = metric.name;
      if (!this.windowNames.has(name)) {
        parts.push(await this.registry.getSingleMetricAsString(name));
        continue;
      }
      let text = this.windowTexts.get(name);
      if (text === undefined) {
        text = await this.registry.getSingleMetricAsString(name);
        // A window judged while this render awaited changed the metrics: keep nothing.
        if (generation === this.generation) this.windowTexts.set(name, text);
      }
      parts.push(text);
    }
    return `${parts.join('\n\n')}\n`;
  }

  /** Forgets the kept window texts (the window metrics changed). */
  private invalidate(): void {
    this.generation++;
    this.windowTexts.clear();
  }

  /** `/readyz`: the source delivers and windows close on time (see {@link readiness}). */
  readiness(): Readiness {
    this.syncStalled();
    const totals = this.pipeline.totals;
    return readiness({
      now: this.clock(),
      startedAt: this.startedAt,
      // Counted or rejected: either way the source delivers.
      recordsSeen:
        totals.recordsSeen +
        Object.values(totals.rejected).reduce((sum, count) => sum + (count ?? 0), 0),
      lastWindowJudgedAt: this.lastJudgedAt,
      sourceStalled: this.stalledAtRecords >= 0,
      hopMs: this.hopMs,
      latenessMs: this.latenessMs,
    });
  }

  /** Stops listening to the pipeline. */
  close(): void {
    for (const off of this.unsubscribe.splice(0)) off();
  }

  private show(judgement: Judgement): void {
    const model = this.model;
    this.requests.set(model, judgement.requests);
    this.shards.set(model, judgement.shards);
    const judged = judgement.fullest !== null;
    this.setOrRemove(this.fullest, judgement.fullest?.relative);
    this.setOrRemove(this.emptiest, judgement.emptiest?.relative);
    this.setOrRemove(this.ceiling, judged ? judgement.ceiling.relative : null);
    this.setOrRemove(this.floor, judged ? judgement.floor?.relative : null);
    const pValues: Record<PValueTest, number | null | undefined> = {
      fullest: judgement.fullest?.p,
      emptiest: judgement.emptiest?.p,
      empty_shards: judgement.empty.p,
      spread: judged ? judgement.spread.p : null,
    };
    for (const test of pValueTests) {
      const value = pValues[test];
      if (value === null || value === undefined) this.pValue.remove({ ...model, test });
      else this.pValue.set({ ...model, test }, value);
    }
    this.emptyShards.set(model, judgement.empty.observed);
    this.emptyExpected.set(model, judgement.empty.expected);
    this.setOrRemove(this.dispersion, judged ? judgement.spread.phi : null);
    this.effective.set(model, judgement.nEff);
    this.robust.set(model, judgement.spreadMode === 'robust' ? 1 : 0);
    for (const [finding, label] of Object.entries(findingLabels)) {
      const holds = judgement.findings.includes(finding as keyof typeof findingLabels);
      this.finding.set({ ...model, finding: label }, holds ? 1 : 0);
    }
    let hot = 0;
    let cold = 0;
    for (const incident of judgement.incidents) {
      if (incident.finding === 'hotspot') hot++;
      else cold++;
    }
    this.incidents.set({ ...model, finding: 'hotspot' }, hot);
    this.incidents.set({ ...model, finding: 'cold' }, cold);
    this.falseIncidents.set(model, judgement.falseIncidentsPerDay);
    this.showKeys(judgement);

    const current = new Map<string, { shard: string; finding: string }>();
    for (const shard of judgement.flagged) {
      const labels = { shard: shardLabel(shard.shard), finding: shard.finding };
      const key = `${labels.finding}\u0000${labels.shard}`;
      // Two ids that sanitize alike keep the stronger (listed first) of the two.
      if (current.has(key)) continue;
      current.set(key, labels);
      this.flagged.set({ ...model, ...labels }, shard.relative);
      this.flaggedP.set({ ...model, ...labels }, shard.p);
    }
    for (const [key, labels] of this.flaggedSeries) {
      if (current.has(key)) continue;
      this.flagged.remove({ ...model, ...labels });
      this.flaggedP.remove({ ...model, ...labels });
    }
    this.flaggedSeries = current;
    this.showIncidents(judgement);
  }

  /**
   * One `shardwise_incident_open` series per open incident, at most --max-flagged: those
   * whose shard the latest window flags (in the judge's order, strongest first), then the
   * longest open; series of incidents that cleared or fell out are removed.
   */
  private showIncidents(judgement: Judgement): void {
    const model = this.model;
    const rank = new Map<string, number>();
    judgement.flagged.forEach((shard, index) => {
      const key = `${shard.finding}\u0000${shard.shard}`;
      if (!rank.has(key)) rank.set(key, index);
    });
    const rankOf = (incident: Judgement['incidents'][number]) =>
      rank.get(`${incident.finding}\u0000${incident.shard}`) ?? Number.POSITIVE_INFINITY;
    const ordered = [...judgement.incidents].sort(
      (a, b) => rankOf(a) - rankOf(b) || b.windows - a.windows,
    );
    const current = new Map<string, { shard: string; finding: string; test: string }>();
    for (const incident of ordered) {
      if (current.size >= this.maxFlagged) break;
      const labels = {
        shard: shardLabel(incident.shard),
        finding: incident.finding,
        test: incident.test,
      };
      const key = `${labels.finding}\u0000${labels.shard}`;
      // Two ids that sanitize alike keep the first (flagged now, or open longer).
      if (current.has(key)) continue;
      current.set(key, labels);
    }
    for (const [key, labels] of this.incidentSeries) {
      const now = current.get(key);
      if (now === undefined || now.test !== labels.test) {
        this.incidentOpen.remove({ ...model, ...labels });
      }
    }
    for (const labels of current.values()) this.incidentOpen.set({ ...model, ...labels }, 1);
    this.incidentSeries = current;
  }

  /** The key gauges: set from a keyed window, removed (absent, never 0) otherwise. */
  private showKeys(judgement: Judgement): void {
    const model = this.model;
    const keys = judgement.keys;
    this.setOrRemove(this.keyedRequests, keys?.keyedRequests);
    this.setOrRemove(this.distinctKeys, keys?.distinctKeys);
    const values: Record<(typeof keyPValueTests)[number], number | null | undefined> = {
      key_fullest: keys?.placement?.fullest.p,
      key_emptiest: keys?.placement?.emptiest.p,
      replacement: keys?.replacement?.p,
    };
    for (const test of keyPValueTests) {
      const value = values[test];
      if (value === null || value === undefined) this.keyPValue.remove({ ...model, test });
      else this.keyPValue.set({ ...model, test }, value);
    }
    for (const [cause, label] of Object.entries(keyCauseLabels)) {
      if (keys === undefined) this.keyCauses.remove({ ...model, cause: label });
      else {
        const count = keys.causes.filter((entry) => entry.cause === cause).length;
        this.keyCauses.set({ ...model, cause: label }, count);
      }
    }
  }

  private setOrRemove(gauge: Gauge<ModelLabel>, value: number | null | undefined): void {
    if (value === null || value === undefined) gauge.remove(this.model);
    else gauge.set(this.model, value);
  }

  /** Brings the record counters up to the pipeline's totals (they only ever grow). */
  private syncTotals(): void {
    const totals = this.pipeline.totals;
    const tooLate = totals.rejected['too late'] ?? 0;
    let rejected = 0;
    for (const [reason, label] of Object.entries(rejectionReasonLabels)) {
      const count = totals.rejected[reason as RejectionReason] ?? 0;
      if (reason !== 'too late') rejected += count;
      const known = this.countedRejections[reason as RejectionReason] ?? 0;
      if (count > known) this.rejections.inc({ reason: label }, count - known);
      this.countedRejections[reason as RejectionReason] = count;
    }
    // A record late for some of its windows (sliding windows) still counts in the others:
    // `records` has it, and so has `lateRecords`; one missing every window is "too late".
    const outcomes: Record<RecordOutcome, number> = {
      accepted: totals.records - (totals.lateRecords - tooLate),
      late: totals.lateRecords,
      rejected,
    };
    for (const outcome of recordOutcomes) {
      const gain = outcomes[outcome] - this.countedRecords[outcome];
      if (gain > 0) this.records.inc({ outcome }, gain);
    }
    this.countedRecords = outcomes;
  }

  /** Clears the stall once records arrive again. */
  private syncStalled(): void {
    if (this.stalledAtRecords >= 0 && this.pipeline.totals.recordsSeen > this.stalledAtRecords) {
      this.stalledAtRecords = -1;
    }
    this.stalled.set(this.stalledAtRecords >= 0 ? 1 : 0);
  }
}
