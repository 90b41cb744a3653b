// A flood of distinct bogus shard ids must not grow the number of series: whatever the
// input, the exporter's series are a fixed set plus at most --max-flagged flagged shards.
import { describe, expect, it } from 'vitest';
import { longestShardLabel } from '../../src/exporter/metric-labels.js';
import { VerdictMetrics } from '../../src/exporter/verdict-metrics.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings, type JudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
import { parseExposition, samplesOf } from './exposition.js';

const startMs = Date.UTC(2025, 11, 1);
const windowMs = 1000;

function observed(universe: ShardUniverse) {
  const settings: JudgeSettings = { ...defaultJudgeSettings, null: 'uniform', hopMs: windowMs };
  const pipeline = new JudgingPipeline(
    universe,
    { windowMs, latenessMs: 0 },
    new Judge(universe, settings),
  );
  const metrics = new VerdictMetrics(pipeline, { settings, windowMs, latenessMs: 0 });
  const scrape = async () => parseExposition(await metrics.registry.metrics());
  const ours = async () => (await scrape()).filter((s) => s.name.startsWith('shardwise_'));
  return { pipeline, metrics, scrape, ours };
}

/** A hostile id: quotes, braces, newlines, unicode and length, different every time. */
function bogusId(window: number, index: number): string {
  const junk = ['"', '}', '\n', '\\', ' ', 'é', '\u0000', '{le="+Inf"}'][index % 8];
  return `bogus${junk}${window}-${index}`.padEnd(20 + (index % 180), '#');
}

describe('the number of series', () => {
  it('stays bounded under a growing universe flooded with new ids, some of them hot', async () => {
    const { pipeline, ours, scrape } = observed(ShardUniverse.growing());
    const counts: number[] = [];
    let allBefore = 0;
    for (let window = 0; window < 30; window++) {
      const ts = startMs + window * windowMs;
      // 2000 new ids a window (60 000 in all), 20 of them hot: more than --max-flagged.
      for (let index = 0; index < 2000; index++) {
        pipeline.record(ts, bogusId(window, index), index < 20 ? 200 : 1);
      }
      if (window === 0) continue;
      const samples = await ours();
      const flagged = samplesOf(samples, 'shardwise_flagged_shard_relative_load');
      expect(flagged).toHaveLength(defaultJudgeSettings.maxFlagged);
      // Only the latest window's flagged shards: those of window - 1.
      for (const sample of flagged) {
        expect(sample.labels.shard).toMatch(new RegExp(`^bogus.*_${window - 1}-\\d`));
        expect(sample.labels.shard.length).toBeLessThanOrEqual(longestShardLabel);
        expect(sample.labels.shard).toMatch(/^[A-Za-z0-9._:/@~-]+$/);
      }
      counts.push(samples.length);
      if (window === 1) allBefore = (await scrape()).length;
    }
    expect(new Set(counts).size).toBe(1);
    // Process metrics may add a few series (a new kind of garbage collection), not hundreds.
    expect((await scrape()).length).toBeLessThan(allBefore + 20);
    expect(pipeline.totals.records).toBe(60_000);
  });

  it('does not grow with ids outside a declared universe or beyond a full one', async () => {
    const declared = observed(ShardUniverse.fromShardsOption('s-0..s-7'));
    const full = observed(ShardUniverse.growing({ maxShards: 8 }));
    const sizes: number[][] = [[], []];
    for (let window = 0; window < 10; window++) {
      const ts = startMs + window * windowMs;
      for (const { pipeline } of [declared, full]) {
        for (let shard = 0; shard < 8; shard++) pipeline.record(ts, `s-${shard}`, 50);
        for (let index = 0; index < 1000; index++) pipeline.record(ts, bogusId(window, index), 1);
      }
      if (window === 0) continue;
      sizes[0].push((await declared.ours()).length);
      sizes[1].push((await full.ours()).length);
    }
    expect(new Set(sizes[0]).size).toBe(1);
    expect(new Set(sizes[1]).size).toBe(1);
    const rejected = (samples: Awaited<ReturnType<typeof declared.ours>>, reason: string) =>
      samplesOf(samples, 'shardwise_rejected_records_total', { reason })[0].value;
    expect(rejected(await declared.ours(), 'outside_universe')).toBe(10_000);
    expect(rejected(await full.ours(), 'too_many_shards')).toBe(10_000);
  });
});
