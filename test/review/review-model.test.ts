import jStat from 'jstat';
import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { ReviewBuilder } from '../../src/review/review-model.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
import { judgeScenario, reviewOf } from './judged-scenario.js';

describe('ReviewBuilder', () => {
  const judged = judgeScenario('hotspot');
  const model = reviewOf(judged);

  it('predicts the peak window spread with the binomial law (jstat 1.9.6 binomial.cdf)', () => {
    const peak = model.peak;
    expect(peak).not.toBeNull();
    const h = peak!.histogram;
    const trials = h.predictedRequests;
    const share = 1 / 64;
    const width = (h.high - h.low) / h.bins;
    // Inner bin b covers relative loads [low + (b-1) w, low + b w): counts from
    // ceil(edge * N p) up to the next edge's ceil minus one. 64 equal shards each add
    // P(from <= X <= to), X ~ Binomial(N', 1/64). Tolerance 1e-6 shards, the summed error
    // of two tails each good to about 1e-9 relative (tails.test.ts).
    for (let bin = 1; bin <= h.bins; bin++) {
      const from = Math.ceil((h.low + (bin - 1) * width) * trials * share);
      const to = Math.ceil((h.low + bin * width) * trials * share) - 1;
      const expected =
        to < from
          ? 0
          : 64 *
            (jStat.binomial.cdf(to, trials, share) - jStat.binomial.cdf(from - 1, trials, share));
      expect(Math.abs(h.expected[bin] - expected)).toBeLessThan(1e-6);
    }
    // The observed bars count every shard once.
    expect(h.observed.reduce((sum, n) => sum + n, 0)).toBe(64);
  });

  it('keeps one series entry per window and the strongest window as the peak', () => {
    expect(model.windows).toBe(judged.windows.length);
    expect(model.series.start).toHaveLength(judged.windows.length);
    const hot = judged.windows.filter(({ judgement }) => judgement.findings.includes('hotspot'));
    expect(hot.some(({ window }) => window.start === model.peak!.start)).toBe(true);
    expect(model.heat.rows[0].shard).toBe('seat-17');
  });
});

describe('ReviewBuilder notes', () => {
  it('reads a progress note repeated with a new count each window as one note', () => {
    // The judge notes "spread learning (k of 10 windows)" in each of its first windows
    // (src/judge/judge.ts); a report lists it once, not ten times.
    const notes = reviewOf(judgeScenario('failover')).notes.filter((note) =>
      note.startsWith('spread learning'),
    );
    expect(notes).toEqual([
      'spread learning (while the first 10 windows are learned): "uneven" is judged against random placement until the cluster\'s usual spread is learned',
    ]);
  });
});

describe('ReviewBuilder over a growing universe that retired ids', () => {
  it('keeps each heat strip row with its own shard across the renumbering', () => {
    // Worked by hand: window 0 has gone 100, a 100, hot 300 (relative loads 0.6, 0.6, 1.8 of
    // the fair share 500 / 3); gone stops, retires where window 1 closes, and window 1 has
    // a 100, hot 300 (0.5 and 1.5 of 400 / 2). hot moves from index 2 to 1.
    const windowMs = 10_000;
    const base = Date.UTC(2025, 11, 1);
    const universe = ShardUniverse.growing();
    const judge = new Judge(universe, { ...defaultJudgeSettings, hopMs: windowMs });
    const pipeline = new JudgingPipeline(universe, { windowMs, latenessMs: 0 }, judge);
    const builder = new ReviewBuilder({
      source: 'test',
      judgedHere: true,
      settings: {
        ...defaultJudgeSettings,
        windowMs,
        hopMs: windowMs,
        declaredUniverse: false,
      },
    });
    pipeline.events.on('window judged', ({ window, judgement }) =>
      builder.add({ ...window, shardIds: universe.ids, shares: null, judgement }),
    );
    for (const [shard, count] of [
      ['gone', 100],
      ['a', 100],
      ['hot', 300],
    ] as const) {
      pipeline.record(base, shard, count);
    }
    pipeline.record(base + windowMs, 'a', 100);
    pipeline.record(base + windowMs, 'hot', 300);
    pipeline.finish();
    const rows = new Map(builder.build().heat.rows.map((row) => [row.shard, row.means]));
    expect(rows.get('hot')?.map((mean) => Number(mean.toFixed(4)))).toEqual([1.8, 1.5]);
    expect(rows.get('a')?.map((mean) => Number(mean.toFixed(4)))).toEqual([0.6, 0.5]);
    // A retired shard's history leaves the strip with it.
    expect(rows.has('gone')).toBe(false);
  });
});
