import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { buildWindowView } from '../../src/ui/window-view.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

const startMs = Date.UTC(2025, 11, 1);

/** One 10 s window of the given counts on shards "0".."m-1", judged with watch's defaults. */
function judged(counts: number[]): { window: ClosedWindow; judgement: Judgement } {
  const universe = ShardUniverse.ofCount(counts.length);
  const judge = new Judge(universe, { ...defaultJudgeSettings, hopMs: 10_000 });
  const pipeline = new JudgingPipeline(universe, { windowMs: 10_000, latenessMs: 0 }, judge);
  const out: { window: ClosedWindow; judgement: Judgement }[] = [];
  pipeline.events.on('window judged', (event) => out.push(event));
  // A count of 0 is a report of no load: the window exists with nothing in it.
  counts.forEach((count, shard) => pipeline.record(startMs, String(shard), count));
  pipeline.finish();
  return out[0];
}

describe('buildWindowView', () => {
  it('7 shards at 100 and one at 300: every shard a candidate with its fair share, the hot one flagged', () => {
    // N = 1000 on 8 equal shards: fair share 125 (N / m), so 100 is 0.8x and 300 is 2.4x.
    const { window, judgement } = judged([100, 100, 100, 100, 100, 100, 100, 300]);
    expect(judgement.flagged.map((shard) => [shard.shard, shard.finding])).toEqual([
      ['7', 'hotspot'],
    ]);
    const view = buildWindowView(window, judgement, null, String);
    expect([view.startMs, view.endMs, view.sharesMatchVerdict]).toEqual([
      startMs,
      startMs + 10_000,
      true,
    ]);
    expect(view.candidates).toHaveLength(8);
    const hot = view.candidates.find((candidate) => candidate.shard === '7');
    expect(hot).toMatchObject({
      count: 300,
      fairShare: 125,
      relative: 2.4,
      finding: 'hotspot',
      p: judgement.flagged[0].p,
      pBound: '',
    });
    for (const candidate of view.candidates.filter((c) => c.shard !== '7')) {
      expect(candidate.count).toBe(100);
      expect(candidate.fairShare).toBe(125);
      expect(candidate.relative).toBeCloseTo(0.8, 15);
      expect(candidate.finding).toBeNull();
      // Below 1x a shard's p is bounded by the emptiest's side, never the hotspot's.
      expect(candidate.p).not.toBe(judgement.flagged[0].p);
    }
    // The histogram holds every shard once and predicts on the judged total.
    expect(view.histogram).not.toBeNull();
    const histogram = view.histogram as NonNullable<typeof view.histogram>;
    expect(histogram.observed.reduce((sum, shards) => sum + shards, 0)).toBe(8);
    expect(histogram.predictedRequests).toBe(Math.round(judgement.judgedRequests));
  });

  it('under the uniform null declared shares are ignored: N / m each', () => {
    const { window, judgement } = judged([100, 300]);
    const uniform = buildWindowView(window, judgement, [0.25, 0.75], String);
    // The verdict is on the uniform null (watch's default without a shard map): 200 each.
    expect(judgement.null).toBe('uniform');
    expect(uniform.candidates.map((c) => [c.shard, c.fairShare])).toEqual(
      expect.arrayContaining([
        ['0', 200],
        ['1', 200],
      ]),
    );
  });

  it('a window without requests: nothing to draw, no rows', () => {
    const { window, judgement } = judged([0, 0, 0, 0]);
    expect(buildWindowView(window, judgement, null, String)).toMatchObject({
      histogram: null,
      candidates: [],
    });
  });
});
