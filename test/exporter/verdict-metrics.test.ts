import { describe, expect, it, vi } from 'vitest';
import { verdictMetricNames, VerdictMetrics } from '../../src/exporter/verdict-metrics.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings, type JudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { KeyAnalysis } from '../../src/keys/key-analysis.js';
import { defaultKeySketchSettings } from '../../src/keys/window-key-stats.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
import { rejectionReasons } from '../../src/window/count-record.js';
import { parseExposition, sampleOf, samplesOf, type Sample } from './exposition.js';

const second = 1000;
const startMs = Date.UTC(2025, 11, 1);
const windowMs = 2 * second;

/** A pipeline as watch builds it, with the exporter's metrics subscribed to it. */
function observed(
  universe: ShardUniverse,
  settings: Partial<JudgeSettings> = {},
  clock: () => number = () => startMs + 3_600_000,
  withKeys = false,
) {
  const judgeSettings: JudgeSettings = {
    ...defaultJudgeSettings,
    null: universe.declared ? 'map' : 'uniform',
    hopMs: windowMs,
    ...settings,
  };
  const judge = new Judge(universe, judgeSettings);
  const keys = withKeys
    ? new KeyAnalysis(universe, {
        windowMs,
        hopMs: windowMs,
        sketch: defaultKeySketchSettings,
        simulations: 200,
        alpha: judgeSettings.alpha,
        null: judgeSettings.null,
        maxFlagged: judgeSettings.maxFlagged,
      })
    : undefined;
  const pipeline = new JudgingPipeline(universe, { windowMs, latenessMs: 0 }, judge, clock, {
    keys,
  });
  let ticks = 0;
  const timer = () => (ticks += 4);
  const metrics = new VerdictMetrics(pipeline, {
    settings: judgeSettings,
    windowMs,
    latenessMs: 0,
    clock,
    timer,
  });
  const judgements: Judgement[] = [];
  pipeline.events.on('window judged', ({ judgement }) => judgements.push(judgement));
  // What /metrics serves: the render with the window metrics kept per judged window.
  const scrape = async (): Promise<Sample[]> => parseExposition(await metrics.render());
  return { pipeline, metrics, judgements, scrape };
}

/** Feeds the seeded hotspot scenario (seat-17 at 1.5x from 1:00) for `durationMs`. */
function feedHotspot(pipeline: JudgingPipeline, durationMs: number): void {
  const run = runScenario('hotspot', { seed: 5, startMs, durationMs });
  for (const record of run.records()) pipeline.record(record.ts, record.shard, record.count);
}

const model = { null: 'map', spread: 'auto' };
const uniformModel = { null: 'uniform', spread: 'auto' };

describe('VerdictMetrics', () => {
  it('shows the latest judgement with the null model and spread mode on each series', async () => {
    const universe = runScenario('hotspot', { seed: 5, startMs, durationMs: 1 }).universe;
    const { pipeline, judgements, scrape } = observed(universe);
    feedHotspot(pipeline, 80 * second);
    // The window at 1:18 closed when the first record of 1:20 arrived; 1:20 is still open.
    const last = judgements.at(-1) as Judgement;
    expect(last.window.start).toBe('2025-12-01T00:01:16.000Z');
    expect(last.findings).toEqual(['hotspot']);
    const samples = await scrape();
    const value = (name: string, labels: Record<string, string> = {}) =>
      sampleOf(samples, name, { ...model, ...labels }).value;
    expect(sampleOf(samples, 'shardwise_judge_info').labels).toEqual({
      null: 'map',
      spread: 'auto',
      alpha: '0.001',
      confirm: '3',
      clear: '5',
    });
    expect(sampleOf(samples, 'shardwise_judge_alpha').value).toBe(0.001);
    expect(sampleOf(samples, 'shardwise_window_length_seconds').value).toBe(2);
    expect(value('shardwise_window_requests')).toBe(last.requests);
    expect(value('shardwise_window_shards')).toBe(64);
    expect(value('shardwise_fullest_shard_relative_load')).toBe(last.fullest?.relative);
    expect(value('shardwise_emptiest_shard_relative_load')).toBe(last.emptiest?.relative);
    expect(value('shardwise_chance_ceiling_relative_load')).toBe(last.ceiling.relative);
    expect(value('shardwise_chance_floor_relative_load')).toBe(last.floor?.relative);
    expect(value('shardwise_window_p_value', { test: 'fullest' })).toBe(last.fullest?.p);
    expect(value('shardwise_window_p_value', { test: 'emptiest' })).toBe(last.emptiest?.p);
    expect(value('shardwise_window_p_value', { test: 'empty_shards' })).toBe(last.empty.p);
    expect(value('shardwise_window_p_value', { test: 'spread' })).toBe(last.spread.p);
    expect(value('shardwise_empty_shards')).toBe(last.empty.observed);
    expect(value('shardwise_empty_shards_expected')).toBe(last.empty.expected);
    expect(value('shardwise_dispersion_index')).toBe(last.spread.phi);
    expect(value('shardwise_effective_placements')).toBe(last.nEff);
    expect(value('shardwise_window_spread_robust')).toBe(last.spreadMode === 'robust' ? 1 : 0);
    expect(value('shardwise_false_incidents_expected_per_day')).toBe(last.falseIncidentsPerDay);
    expect(samplesOf(samples, 'shardwise_finding').map((s) => [s.labels.finding, s.value])).toEqual(
      [
        ['hotspot', 1],
        ['cold', 0],
        ['uneven', 0],
        ['chance', 0],
        ['too_little_traffic', 0],
      ],
    );
    expect(last.incidents.map((incident) => incident.shard)).toEqual(['seat-17']);
    expect(value('shardwise_open_incidents', { finding: 'hotspot' })).toBe(1);
    expect(value('shardwise_open_incidents', { finding: 'cold' })).toBe(0);
    const flagged = samplesOf(samples, 'shardwise_flagged_shard_relative_load');
    expect(flagged.map((s) => [s.labels.shard, s.labels.finding, s.value])).toEqual(
      last.flagged.map((shard) => [shard.shard, shard.finding, shard.relative]),
    );
    expect(sampleOf(samples, 'shardwise_windows_closed_total').value).toBe(judgements.length);
    expect(sampleOf(samples, 'shardwise_last_window_end_timestamp_seconds').value).toBe(
      Date.parse(last.window.end) / 1000,
    );
    // The clock stands an hour after the scenario's start.
    expect(sampleOf(samples, 'shardwise_source_lag_seconds').value).toBe(
      (startMs + 3_600_000 - Date.parse(last.window.end)) / 1000,
    );
    // The fake timer advances 4 ms per reading: each window took 4 ms to judge.
    expect(sampleOf(samples, 'shardwise_window_judging_duration_seconds_count').value).toBe(
      judgements.length,
    );
    expect(
      sampleOf(samples, 'shardwise_window_judging_duration_seconds_bucket', { le: '0.0025' }).value,
    ).toBe(0);
    expect(
      sampleOf(samples, 'shardwise_window_judging_duration_seconds_bucket', { le: '0.005' }).value,
    ).toBe(judgements.length);
    // 64 count reports a second for 80 s, all accepted.
    expect(sampleOf(samples, 'shardwise_records_total', { outcome: 'accepted' }).value).toBe(
      64 * 80,
    );
    expect(sampleOf(samples, 'shardwise_records_total', { outcome: 'rejected' }).value).toBe(0);
  });

  it('renders the window metrics once per judged window; totals and process metrics at every scrape', async () => {
    const universe = runScenario('hotspot', { seed: 5, startMs, durationMs: 1 }).universe;
    const { pipeline, metrics, judgements } = observed(universe);
    // CPU time and memory move between two renders; everything else must agree.
    const steady = (text: string) => text.replace(/^process_(cpu|resident)\S* \S+$/gm, '');
    const fresh = async () => steady(await metrics.registry.metrics());
    const render = async () => steady(await metrics.render());
    // Before any window: the same text as the registry's own render.
    expect(await render()).toBe(await fresh());
    feedHotspot(pipeline, 21 * second);
    const windows = judgements.length;
    expect(windows).toBeGreaterThan(3);
    const requests = metrics.registry.getSingleMetric('shardwise_window_requests')!;
    const records = metrics.registry.getSingleMetric('shardwise_records_total')!;
    const requestReads = vi.spyOn(requests, 'get');
    const recordReads = vi.spyOn(records, 'get');
    const first = await render();
    expect(first).toBe(await fresh());
    expect(requestReads).toHaveBeenCalledTimes(2); // this render and the registry's
    // More records within the open window (2 s windows, [20 s, 22 s) open): no window judged, so the window metrics are
    // not rendered again, while the record totals move.
    const run = runScenario('hotspot', { seed: 5, startMs, durationMs: 22 * second });
    for (const record of run.records()) {
      if (record.ts >= startMs + 21 * second)
        pipeline.record(record.ts, record.shard, record.count);
    }
    expect(judgements.length).toBe(windows);
    const second_ = await render();
    expect(requestReads).toHaveBeenCalledTimes(2);
    expect(recordReads).toHaveBeenCalledTimes(3);
    expect(second_).not.toBe(first);
    expect(second_).toBe(await fresh());
    // A judged window renders them again, once.
    feedHotspot(pipeline, 30 * second);
    expect(judgements.length).toBeGreaterThan(windows);
    requestReads.mockClear();
    const third = await render();
    await render();
    expect(requestReads).toHaveBeenCalledTimes(1);
    expect(third).toBe(await fresh());
  });

  it('defines exactly the names it lists, and they follow the naming rules', async () => {
    // The keyed hot-key drill: from 1:00 its hot key makes a flagged hotspot and an
    // incident, so every series, the key ones included, exists.
    const run = runScenario('hot-key', { seed: 5, startMs, durationMs: 70 * second });
    const { pipeline, metrics } = observed(run.universe, {}, undefined, true);
    for (const record of run.records()) {
      pipeline.record(record.ts, record.shard, record.count, record.key);
    }
    const text = await metrics.registry.metrics();
    const names = new Set(
      parseExposition(text)
        .map((sample) => sample.name.replace(/_(bucket|sum|count)$/, ''))
        .filter((name) => name.startsWith('shardwise_')),
    );
    expect([...names].sort()).toEqual([...verdictMetricNames].sort());
    for (const name of verdictMetricNames) {
      expect(name).toMatch(/^shardwise_[a-z][a-z0-9_]*$/);
      // Counters and only counters end in _total (Prometheus naming practice).
      const type = new RegExp(`^# TYPE ${name} (\\w+)$`, 'm').exec(text)?.[1];
      expect(type).toBeDefined();
      expect(name.endsWith('_total')).toBe(type === 'counter');
    }
  });

  it('shows the key verdict of a keyed window, and no key series for count reports', async () => {
    const run = runScenario('hot-key', { seed: 5, startMs, durationMs: 70 * second });
    const { pipeline, judgements, scrape } = observed(run.universe, {}, undefined, true);
    for (const record of run.records()) {
      pipeline.record(record.ts, record.shard, record.count, record.key);
    }
    const keys = (judgements.at(-1) as Judgement).keys;
    expect(keys?.causes.some((cause) => cause.cause === 'hot key')).toBe(true);
    const samples = await scrape();
    expect(sampleOf(samples, 'shardwise_keyed_requests', model).value).toBe(keys?.keyedRequests);
    expect(sampleOf(samples, 'shardwise_distinct_keys', model).value).toBe(keys?.distinctKeys);
    expect(
      sampleOf(samples, 'shardwise_key_p_value', { ...model, test: 'replacement' }).value,
    ).toBe(keys?.replacement?.p);
    expect(sampleOf(samples, 'shardwise_key_causes', { ...model, cause: 'hot_key' }).value).toBe(
      keys?.causes.filter((cause) => cause.cause === 'hot key').length,
    );
    // Keys are never labels: no series carries one.
    for (const sample of samples) {
      for (const value of Object.values(sample.labels)) expect(value).not.toContain('presale');
    }

    const universe = runScenario('hotspot', { seed: 5, startMs, durationMs: 1 }).universe;
    const counted = observed(universe, {}, undefined, true);
    feedHotspot(counted.pipeline, 20 * second);
    const plain = await counted.scrape();
    for (const name of [
      'shardwise_keyed_requests',
      'shardwise_distinct_keys',
      'shardwise_key_p_value',
      'shardwise_key_causes',
    ]) {
      expect(samplesOf(plain, name)).toEqual([]);
    }
  });

  it('shows nothing made up before the first window, and no made-up zeros after a quiet one', async () => {
    const universe = ShardUniverse.fromShardsOption('s-0..s-7');
    const { pipeline, scrape } = observed(universe, { null: 'uniform' });
    let samples = await scrape();
    for (const name of [
      'shardwise_window_requests',
      'shardwise_window_p_value',
      'shardwise_finding',
      'shardwise_flagged_shard_relative_load',
    ]) {
      expect(samplesOf(samples, name)).toEqual([]);
    }
    expect(sampleOf(samples, 'shardwise_last_window_end_timestamp_seconds').value).toBe(0);
    expect(sampleOf(samples, 'shardwise_source_lag_seconds').value).toBeNaN();
    // Every outcome and every reason is there from the start, at 0, so rates are defined.
    expect(samplesOf(samples, 'shardwise_records_total')).toHaveLength(3);
    expect(samplesOf(samples, 'shardwise_rejected_records_total')).toHaveLength(
      rejectionReasons.length,
    );

    // One window with requests, then a window without any (the next record is 4 s later).
    for (let shard = 0; shard < 8; shard++) pipeline.record(startMs, `s-${shard}`, 100);
    pipeline.record(startMs + 4 * second, 's-0', 1);
    samples = await scrape();
    const uniform = { null: 'uniform', spread: 'auto' };
    expect(sampleOf(samples, 'shardwise_window_requests', uniform).value).toBe(0);
    expect(samplesOf(samples, 'shardwise_fullest_shard_relative_load')).toEqual([]);
    expect(samplesOf(samples, 'shardwise_chance_ceiling_relative_load')).toEqual([]);
    expect(samplesOf(samples, 'shardwise_window_p_value', { test: 'fullest' })).toEqual([]);
    expect(sampleOf(samples, 'shardwise_finding', { finding: 'too_little_traffic' }).value).toBe(1);
    expect(sampleOf(samples, 'shardwise_windows_closed_total').value).toBe(2);
  });

  it('leaves out the emptiest shard p-value and the floor when the cold tests are off', async () => {
    const { pipeline, scrape } = observed(ShardUniverse.growing());
    for (let shard = 0; shard < 8; shard++) pipeline.record(startMs, `s-${shard}`, 100);
    pipeline.record(startMs + 2 * second, 's-0', 100);
    const samples = await scrape();
    expect(samplesOf(samples, 'shardwise_window_p_value', { test: 'fullest' })).toHaveLength(1);
    expect(samplesOf(samples, 'shardwise_window_p_value', { test: 'spread' })).toHaveLength(1);
    expect(samplesOf(samples, 'shardwise_window_p_value', { test: 'emptiest' })).toEqual([]);
    expect(samplesOf(samples, 'shardwise_window_p_value', { test: 'empty_shards' })).toEqual([]);
    expect(samplesOf(samples, 'shardwise_chance_floor_relative_load')).toEqual([]);
    expect(samplesOf(samples, 'shardwise_emptiest_shard_relative_load')).toHaveLength(1);
  });

  it('counts the ids a growing universe retires', async () => {
    const { pipeline, judgements, scrape } = observed(ShardUniverse.growing());
    expect(sampleOf(await scrape(), 'shardwise_shards_retired_total').value).toBe(0);
    // Worked by hand: 8 shards report 100 each in window 0, only s-0..s-3 in window 1 (100
    // each, above ln(1000 x 4) = 8.3: a live shard would be empty with probability e^-100),
    // so s-4..s-7 retire where window 1 closes, at the record of window 2.
    for (let shard = 0; shard < 8; shard++) pipeline.record(startMs, `s-${shard}`, 100);
    for (let shard = 0; shard < 4; shard++) pipeline.record(startMs + windowMs, `s-${shard}`, 100);
    pipeline.record(startMs + 2 * windowMs, 's-0', 100);
    expect(judgements.map((judgement) => judgement.retiredShards)).toEqual([0, 4]);
    expect(sampleOf(await scrape(), 'shardwise_shards_retired_total').value).toBe(4);
  });

  it('removes a flagged shard series once the shard is no longer flagged', async () => {
    const universe = ShardUniverse.fromShardsOption('s-0..s-15');
    const { pipeline, judgements, scrape } = observed(universe, { null: 'uniform' });
    const window = (index: number, hot: string | null) => {
      for (let shard = 0; shard < 16; shard++) {
        const id = `s-${shard}`;
        pipeline.record(startMs + index * windowMs, id, id === hot ? 400 : 100);
      }
    };
    window(0, 's-3');
    window(1, 's-9');
    let flagged = samplesOf(await scrape(), 'shardwise_flagged_shard_relative_load');
    expect(judgements.at(-1)?.flagged.map((shard) => shard.shard)).toEqual(['s-3']);
    expect(flagged.map((s) => s.labels.shard)).toEqual(['s-3']);
    window(2, null);
    flagged = samplesOf(await scrape(), 'shardwise_flagged_shard_relative_load');
    expect(flagged.map((s) => s.labels.shard)).toEqual(['s-9']);
    window(3, null);
    flagged = samplesOf(await scrape(), 'shardwise_flagged_shard_relative_load');
    expect(flagged).toEqual([]);
  });

  it('names the shard of each open incident, at most --max-flagged, flagged ones first, until it clears', async () => {
    const universe = ShardUniverse.fromShardsOption('s-0..s-31');
    const { pipeline, judgements, scrape } = observed(universe, {
      null: 'uniform',
      maxFlagged: 2,
    });
    // hot: shard -> count (others 100).
    const window = (index: number, hot: Record<string, number>) => {
      for (let shard = 0; shard < 32; shard++) {
        const id = `s-${shard}`;
        pipeline.record(startMs + index * windowMs, id, hot[id] ?? 100);
      }
    };
    const open = async () =>
      samplesOf(await scrape(), 'shardwise_incident_open').map((sample) => sample.labels);
    // s-1 runs hot from window 0, s-2 from window 1, s-5 (hotter) from window 2.
    window(0, { 's-1': 300 });
    window(1, { 's-1': 300, 's-2': 300 });
    for (let index = 2; index < 6; index++) window(index, { 's-1': 300, 's-2': 300, 's-5': 400 });
    window(6, { 's-5': 400 });
    // Window 5 judged: three hotspot incidents open, two shown: those flagged now.
    const last = judgements.at(-1) as Judgement;
    expect(last.incidents.map((incident) => incident.shard).sort()).toEqual(['s-1', 's-2', 's-5']);
    const shown = await open();
    expect(last.flagged.map((shard) => shard.shard)).toContain('s-5');
    expect(shown.map((labels) => labels.shard).sort()).toEqual(
      last.flagged.map((shard) => shard.shard).sort(),
    );
    for (const labels of shown) {
      expect(labels).toMatchObject({ ...uniformModel, finding: 'hotspot' });
      expect(['window', 'cusum']).toContain(labels.test);
    }
    // The adjusted p-value of every flagged shard beside its relative load.
    const pValues = samplesOf(await scrape(), 'shardwise_flagged_shard_p_value');
    expect(pValues.map((sample) => [sample.labels.shard, sample.value]).sort()).toEqual(
      last.flagged.map((shard) => [shard.shard, shard.p]).sort(),
    );
    // Window 6 judged: only s-5 flagged; then the longest open of the easing ones, s-1.
    window(7, { 's-5': 400 });
    const later = judgements.at(-1) as Judgement;
    expect(later.flagged.map((shard) => shard.shard)).toEqual(['s-5']);
    expect(later.incidents).toHaveLength(3);
    expect((await open()).map((labels) => labels.shard).sort()).toEqual(['s-1', 's-5']);
    expect(samplesOf(await scrape(), 'shardwise_flagged_shard_p_value')).toHaveLength(1);
    // Everything calm: once the incidents clear (--clear 5 clean windows), no series is left.
    for (let index = 8; index < 16; index++) window(index, {});
    expect((judgements.at(-1) as Judgement).incidents).toEqual([]);
    expect(await open()).toEqual([]);
    expect(samplesOf(await scrape(), 'shardwise_flagged_shard_p_value')).toEqual([]);
  });

  it('counts records by outcome and rejections by reason from the pipeline totals', async () => {
    const universe = ShardUniverse.fromShardsOption('s-0..s-3');
    const { pipeline, scrape } = observed(universe, { null: 'uniform' });
    pipeline.record(startMs, 's-0', 5);
    pipeline.record(startMs, 's-1', 5);
    pipeline.record(startMs, 'intruder', 5);
    pipeline.reject('not JSON', 7);
    pipeline.reject('not JSON', 8);
    pipeline.record(startMs + 2 * second, 's-2', 5);
    // Its window closed when the record above arrived (lateness 0): too late.
    pipeline.record(startMs + 500, 's-3', 5);
    let samples = await scrape();
    const outcome = (name: string) =>
      sampleOf(samples, 'shardwise_records_total', { outcome: name }).value;
    const reason = (name: string) =>
      sampleOf(samples, 'shardwise_rejected_records_total', { reason: name }).value;
    expect([outcome('accepted'), outcome('rejected'), outcome('late')]).toEqual([3, 3, 1]);
    expect([reason('not_json'), reason('outside_universe'), reason('too_late')]).toEqual([2, 1, 1]);
    expect(reason('wrong_type')).toBe(0);
    // A second scrape adds only what came since.
    pipeline.reject('wrong type');
    samples = await scrape();
    expect([outcome('accepted'), outcome('rejected'), outcome('late')]).toEqual([3, 4, 1]);
    expect(reason('wrong_type')).toBe(1);
  });

  it('says when the source stalled and clears it when records come again', async () => {
    let now = startMs;
    const universe = ShardUniverse.fromShardsOption('s-0..s-3');
    const { pipeline, metrics, scrape } = observed(universe, { null: 'uniform' }, () => now);
    const stalled = async () => sampleOf(await scrape(), 'shardwise_source_stalled').value;
    expect(metrics.readiness()).toEqual({
      ready: false,
      reasons: ['source: no record received in 0.0 s since start', 'windows: none closed yet'],
    });
    pipeline.record(startMs, 's-0', 1);
    pipeline.tick();
    expect(metrics.readiness().reasons).toEqual(['windows: none closed yet']);
    // Quiet for a window plus the lateness: windows close on the wall clock, stall announced.
    now += 2500;
    pipeline.tick();
    expect(await stalled()).toBe(1);
    expect(metrics.readiness()).toEqual({
      ready: false,
      reasons: ['source: stalled (no records for longer than a window plus the lateness)'],
    });
    pipeline.record(now, 's-1', 1);
    expect(await stalled()).toBe(0);
    expect(metrics.readiness()).toEqual({ ready: true, reasons: ['ready'] });
    // Nothing closes for longer than two hops plus the lateness plus one second.
    now += 5001;
    expect(metrics.readiness().ready).toBe(false);
    expect(metrics.readiness().reasons[0]).toMatch(/^windows: the latest closed 5\.0 s ago/);
  });

  it('stops listening when closed', async () => {
    const universe = ShardUniverse.fromShardsOption('s-0..s-3');
    const { pipeline, metrics, scrape } = observed(universe, { null: 'uniform' });
    metrics.close();
    pipeline.record(startMs, 's-0', 1);
    pipeline.finish();
    expect(sampleOf(await scrape(), 'shardwise_windows_closed_total').value).toBe(0);
  });
});
