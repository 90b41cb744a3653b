import jStat from 'jstat';
import { describe, expect, it } from 'vitest';
import { ReviewBuilder } from '../../src/review/review-model.js';
import { judgeScenario } from './judged-scenario.js';

describe('ReviewBuilder', () => {
  const judged = judgeScenario('hotspot');
  const builder = new ReviewBuilder({
    source: 'test',
    judgedHere: true,
    settings: { ...judged.recorded },
  });
  for (const { window, judgement } of judged.windows) {
    builder.add({
      start: window.start,
      end: window.end,
      counts: window.counts,
      total: window.total,
      shardIds: judged.universe.ids,
      shares: null,
      judgement,
    });
  }
  const model = builder.build();

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
