import { spawn } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { VerdictMetrics } from '../../src/exporter/verdict-metrics.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
import { requirePromtool } from '../dashboards/promtool.js';

/** `promtool check metrics` reads an exposition on stdin; exit 0 and no output when clean. */
function checkMetrics(text: string): Promise<{ code: number | null; out: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(requirePromtool(), ['check', 'metrics'], { stdio: 'pipe' });
    let out = '';
    child.stdout.on('data', (d) => (out += d));
    child.stderr.on('data', (d) => (out += d));
    child.on('error', reject);
    child.on('close', (code) => resolve({ code, out }));
    child.stdin.end(text);
  });
}

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
});
