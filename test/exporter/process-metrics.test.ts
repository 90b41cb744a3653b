import { describe, expect, it } from 'vitest';
import { VerdictMetrics } from '../../src/exporter/verdict-metrics.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
import { MergeMetrics, type SummaryMergeSource } from '../../src/cli/watch-merge.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import { checkMetrics } from '../dashboards/promtool.js';

describe('a scrape of the metrics endpoint', () => {
  it('passes promtool check metrics (measured on main: exit 3 on the default collectors\u2019 nodejs_active_*_total gauges)', async () => {
    // Source of truth: Debian's promtool, the Prometheus project's own exposition linter.
    const universe = ShardUniverse.fromIds(['a', 'b', 'c']);
    const settings = { ...defaultJudgeSettings, hopMs: 10_000 };
    const pipeline = new JudgingPipeline(
      universe,
      { windowMs: 10_000, latenessMs: 0 },
      new Judge(universe, settings),
    );
    const metrics = new VerdictMetrics(pipeline, { settings, windowMs: 10_000, latenessMs: 0 });
    for (let at = 0; at < 40; at++) pipeline.record(at * 1000, ['a', 'b', 'c'][at % 3], 5);
    pipeline.finish();
    const text = await metrics.registry.metrics();
    expect(await checkMetrics(text)).toEqual({ code: 0, out: '' });
    expect(text).toMatch(/^process_cpu_seconds_total \d/m);
    expect(text).toMatch(/^process_resident_memory_bytes \d/m);
    expect(text).toMatch(/^process_start_time_seconds \d/m);
  });

  it('passes promtool check metrics with open incidents, flagged p-values and the merge counters', async () => {
    // Source of truth: Debian's promtool (as above). The hotspot scenario (seat-17 at 1.5x
    // from 1:00) opens an incident by 2:00; watch --merge adds its metrics to the registry.
    const windowMs = 10_000;
    const run = runScenario('hotspot', { seed: 3, startMs: 0, durationMs: 120_000 });
    const settings = { ...defaultJudgeSettings, null: 'map' as const, hopMs: windowMs };
    const pipeline = new JudgingPipeline(
      run.universe,
      { windowMs, latenessMs: 0 },
      new Judge(run.universe, settings),
    );
    const metrics = new VerdictMetrics(pipeline, { settings, windowMs, latenessMs: 0 });
    // Only partOutcomes is read of the source.
    const outcomes = { merged: 12, duplicate: 1, afterVerdict: 0, refused: 2 };
    const source = { partOutcomes: outcomes } as unknown as SummaryMergeSource;
    new MergeMetrics(metrics.registry, source);
    for (const record of run.records()) pipeline.record(record.ts, record.shard, record.count);
    let text = await metrics.registry.metrics();
    expect(await checkMetrics(text)).toEqual({ code: 0, out: '' });
    expect(text).toMatch(
      /^shardwise_incident_open\{null="map",spread="auto",shard="seat-17",finding="hotspot",test="(window|cusum)"\} 1$/m,
    );
    expect(text).toMatch(
      /^shardwise_flagged_shard_p_value\{[^}]*shard="seat-17"[^}]*\} [0-9.e-]+$/m,
    );
    // A running count is a counter ending in _total (common practice: the Prometheus
    // naming guidelines), and it only grows.
    expect(text).toContain('# TYPE shardwise_partial_parts_total counter');
    expect(text).toMatch(/^shardwise_partial_parts_total\{outcome="merged"\} 12$/m);
    expect(text).toMatch(/^shardwise_partial_parts_total\{outcome="after_verdict"\} 0$/m);
    outcomes.merged = 20;
    text = await metrics.registry.metrics();
    expect(text).toMatch(/^shardwise_partial_parts_total\{outcome="merged"\} 20$/m);
    expect(text).toMatch(/^shardwise_partial_parts_total\{outcome="refused"\} 2$/m);
    expect(await checkMetrics(text)).toEqual({ code: 0, out: '' });
    metrics.close();
  });
});
