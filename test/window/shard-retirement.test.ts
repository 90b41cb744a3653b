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
    // Worked by hand from the policy (README, "The shard universe and --max-shards"): the
    // window-1 record that finds the universe full closes nothing yet; window 2's first
    // record closes window 1, where the window-0 ids (db-0 among them) are absent while ids
    // were refused: 50 001 retire, and window 2's flood fills the room again. Window 3's
    // db-0 closes window 2 (no id refused since, 1 request per shard: nobody retires), so
    // db-1..db-63 find the universe full and are refused in window 3 (63 records). Window
    // 4's first record closes window 3, where 100 requests per reporting shard mean an
    // absent id is no live shard: the 99 999 flood ids left retire. From window 4 on
    // nothing is refused and m is 64: the real shards lose one window, not the run.
    for (const verdict of verdicts.slice(4)) {
      expect(verdict.rejected['too many shards'] ?? 0).toBe(0);
      // m is the shards still reporting: the 64 real ones, not every id ever seen.
      expect(verdict.shards).toBe(64);
      // An even load (each shard exactly its fair share, 100 of 6400) is no hotspot: worked
      // by hand, relative load 100 / (6400 / 64) = 1 for every shard.
      expect(verdict.findings).not.toContain('hotspot');
      expect(verdict.fullest?.relative).toBeCloseTo(1, 12);
      expect(verdict.incidents).toEqual([]);
    }
    // Evictions are counted and said: 50 001 + 99 999 (above), every flood id ever admitted
    // and db-0 once; the rest of the flood was refused as "too many shards".
    const retired = verdicts.reduce((sum, verdict) => sum + (verdict.retiredShards ?? 0), 0);
    expect(verdicts[3].rejected['too many shards']).toBe(63);
    expect(retired).toBe(150_000);
    expect(universe.retiredTotal).toBe(150_000);
    expect(universe.size).toBe(64);
  });

  it('keeps closing windows when the flood fills the universe and stops, so no id is refused for good', () => {
    // Worked by hand: 15 bogus ids in window 0 fill a universe of 10 (5 refused); from
    // window 1 on only 4 new ids report, 10 requests each. Refused records still carry valid
    // timestamps: window 1's first record closes window 0, whose ids reported in it and stay,
    // so window 1's records are refused too (4). Window 2's first record closes window 1, where
    // the bogus ids are absent and the full universe refused ids: all 10 retire before
    // window 1 is judged (m = 0), and the real shards are admitted from window 2 on.
    const { universe, pipeline, verdicts } = growingPipeline(10);
    for (let bogus = 0; bogus < 15; bogus++) pipeline.record(base + bogus, `bogus-${bogus}`, 1);
    for (let window = 1; window < 6; window++) {
      for (let shard = 0; shard < 4; shard++) {
        pipeline.record(base + window * windowMs + shard, `db-${shard}`, 10);
      }
    }
    pipeline.finish();
    expect(verdicts.map((verdict) => verdict.shards)).toEqual([10, 0, 4, 4, 4, 4]);
    expect(verdicts.map((verdict) => verdict.retiredShards)).toEqual([0, 10, 0, 0, 0, 0]);
    expect(verdicts.map((verdict) => verdict.rejected['too many shards'] ?? 0)).toEqual([
      5, 4, 0, 0, 0, 0,
    ]);
    expect(universe.ids).toEqual(['db-0', 'db-1', 'db-2', 'db-3']);
  });
});
