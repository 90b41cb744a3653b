import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

const second = 1000;
const windowMs = 10 * second;
// 2025-12-01T00:00:00Z, a multiple of 10 s.
const base = Date.UTC(2025, 11, 1);

/** Verdicts of a pipeline over a growing universe, with the universe's size after each. */
function growingPipeline(maxShards?: number) {
  const universe = ShardUniverse.growing(maxShards === undefined ? {} : { maxShards });
  const judge = new Judge(universe, { ...defaultJudgeSettings, hopMs: windowMs });
  const pipeline = new JudgingPipeline(universe, { windowMs, latenessMs: 0 }, judge);
  const verdicts: Judgement[] = [];
  const heldAfter: number[] = [];
  pipeline.events.on('window judged', ({ judgement }) => {
    verdicts.push(judgement);
    heldAfter.push(universe.size);
  });
  return { universe, pipeline, verdicts, heldAfter };
}

/** 64 real shards, each with exactly `perShard` requests in window `window`: a perfectly even load. */
function realWindow(pipeline: JudgingPipeline, window: number, perShard: number): void {
  const start = base + window * windowMs;
  for (let shard = 0; shard < 64; shard++) {
    pipeline.record(start + shard, `db-${shard}`, perShard);
  }
}

describe('a growing universe flooded with bogus ids', () => {
  it('admits the 64 real shards once the flood stops, judges them over m = 64, without a false hotspot', () => {
    // The measured failure (issue "Event time you can trust", item 4a): 150 000 bogus ids in
    // the first windows of a stream without --shards fill the default --max-shards 100 000.
    const { universe, pipeline, verdicts, heldAfter } = growingPipeline();
    // One real shard reports during the flood and is admitted.
    pipeline.record(base, 'db-0', 100);
    for (let bogus = 0; bogus < 150_000; bogus++) {
      // 50 000 bogus ids per window over windows 0, 1 and 2, one request each.
      const window = Math.floor(bogus / 50_000);
      pipeline.record(base + window * windowMs + (bogus % 50_000) / 10, `bogus-${bogus}`, 1);
    }
    for (let window = 3; window < 20; window++) realWindow(pipeline, window, 100);
    pipeline.finish();

    expect(verdicts).toHaveLength(20);
    // Memory stays bounded: the universe never holds more than --max-shards ids.
    expect(Math.max(...heldAfter)).toBeLessThanOrEqual(100_000);
    // Every real shard is admitted as soon as the flood stops: the window-0 ids retire at the
    // boundary after the full universe refused ids, leaving room; the rest retire when
    // window 3 closes, where 100 requests per reporting shard make an absent shard no live
    // one. From window 3 on nothing is refused and m is 64.
    for (const verdict of verdicts.slice(3)) {
      expect(verdict.rejected['too many shards'] ?? 0).toBe(0);
      // m is the shards still reporting: the 64 real ones, not every id ever seen.
      expect(verdict.shards).toBe(64);
      // An even load (each shard exactly its fair share, 100 of 6400) is no hotspot: worked
      // by hand, relative load 100 / (6400 / 64) = 1 for every shard.
      expect(verdict.findings).not.toContain('hotspot');
      expect(verdict.fullest?.relative).toBeCloseTo(1, 12);
      expect(verdict.incidents).toEqual([]);
    }
    // Evictions are counted and said: all 100 000 admitted ids but the real db-0 retire
    // (99 999 bogus ids), the rest of the flood was refused as "too many shards".
    const retired = verdicts.reduce((sum, verdict) => sum + (verdict.retiredShards ?? 0), 0);
    expect(retired).toBe(99_999);
    expect(universe.retiredTotal).toBe(99_999);
    expect(universe.size).toBe(64);
  });
});
