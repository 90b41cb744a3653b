// The metric names a scrape of `watch` holds, taken from the exporter's own registry after
// it has judged windows of a seeded scenario (so every series that can exist is there:
// flagged shards and open incidents included).
import { VerdictMetrics } from '../../src/exporter/verdict-metrics.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings, type JudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import { parseExposition } from '../exporter/exposition.js';

export async function exportedMetricNames(): Promise<Set<string>> {
  const windowMs = 10_000;
  const run = runScenario('hotspot', { seed: 1, startMs: 0, durationMs: 150_000 });
  const settings: JudgeSettings = { ...defaultJudgeSettings, null: 'map', hopMs: windowMs };
  const pipeline = new JudgingPipeline(
    run.universe,
    { windowMs, latenessMs: 0 },
    new Judge(run.universe, settings),
  );
  const metrics = new VerdictMetrics(pipeline, { settings, windowMs, latenessMs: 0 });
  for (const record of run.records()) pipeline.record(record.ts, record.shard, record.count);
  pipeline.reject('not JSON');
  const samples = parseExposition(await metrics.registry.metrics());
  metrics.close();
  return new Set(samples.map((sample) => sample.name));
}
