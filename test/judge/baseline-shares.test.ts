import { describe, expect, it } from 'vitest';
import { BaselineShares, priorRequestsPerShard } from '../../src/judge/baseline-shares.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

function closed(counts: readonly number[], index: number): ClosedWindow {
  const vector = Float64Array.from(counts);
  return {
    start: index * 10_000,
    end: (index + 1) * 10_000,
    counts: vector,
    total: vector.reduce((sum, count) => sum + count, 0),
    late: 0,
    rejected: {},
  };
}

describe('BaselineShares', () => {
  it('needs a quarter of its span before it is ready', () => {
    // Our rule: ceil(span / 4) windows, at least 1.
    expect(new BaselineShares(60).neededWindows).toBe(15);
    expect(new BaselineShares(1).neededWindows).toBe(1);
  });

  it('shrinks one learned window toward the declared shares by the stated prior', () => {
    // Worked by hand: 2 shards, one window [300, 100], prior 100 per shard = 200 requests at
    // shares 1/2: q = (300 + 100) / (400 + 200) = 2/3 and (100 + 100) / 600 = 1/3.
    expect(priorRequestsPerShard).toBe(100);
    const baseline = new BaselineShares(60);
    baseline.learn([300, 100], 400);
    const shares = baseline.shares(2, null);
    expect(shares[0]).toBeCloseTo(2 / 3, 12);
    expect(shares[1]).toBeCloseTo(1 / 3, 12);
  });

  it('weights recent windows more, with the span convention lambda = 1 - 2 / (span + 1)', () => {
    // Worked by hand, span 3: lambda = 1/2. Windows [100, 0] then [0, 100]: weighted counts
    // [50, 100], total 150, prior 200 at 1/2: q0 = (50 + 100) / 350 = 3/7.
    const baseline = new BaselineShares(3);
    baseline.learn([100, 0], 100);
    baseline.learn([0, 100], 100);
    expect(baseline.shares(2, null)[0]).toBeCloseTo(3 / 7, 12);
  });

  it('states how much its own uncertainty widens a window: 1 / (1 + N / S_eff)', () => {
    // Worked by hand: one learned window of N = 400 on 2 shards; S = 400, sum w^2 N = 400,
    // S_eff = (400 + 200)^2 / 400 = 900, so a window of 400 is scaled by 1 / (1 + 4/9) = 9/13.
    const baseline = new BaselineShares(60);
    expect(baseline.uncertaintyScale(400, 2)).toBe(1);
    baseline.learn([300, 100], 400);
    expect(baseline.uncertaintyScale(400, 2)).toBeCloseTo(9 / 13, 12);
  });
});

describe('the baseline null in the judge', () => {
  // Shard 0 always carries twice its declared share: unusual against the declared shares,
  // usual for this cluster.
  const usual = [2000, ...new Array<number>(15).fill(1000)];

  it('falls back to the declared shares while learning, and says so', () => {
    const judge = new Judge(ShardUniverse.ofCount(16), {
      ...defaultJudgeSettings,
      null: 'baseline',
      baselineWindows: 8,
      hopMs: 10_000,
    });
    const first = judge.judge(closed(usual, 0));
    expect(first.null).toBe('baseline');
    expect(first.baseline).toEqual({ ready: false, learnedWindows: 0, neededWindows: 2 });
    expect(first.findings).toContain('hotspot');
    expect(first.notes.join(' ')).toMatch(
      /baseline learning \(0 of 2 windows\): judged against the declared shares/,
    );
  });

  it('once ready, calls the usual skew chance and a new hotspot a hotspot', () => {
    const judge = new Judge(ShardUniverse.ofCount(16), {
      ...defaultJudgeSettings,
      null: 'baseline',
      baselineWindows: 8,
      confirm: 1,
      hopMs: 10_000,
    });
    for (let index = 0; index < 10; index++) judge.judge(closed(usual, index));
    const steady = judge.judge(closed(usual, 10));
    expect(steady.baseline?.ready).toBe(true);
    expect(steady.findings).toEqual(['chance']);
    expect(steady.judgedRequests).toBeLessThan(steady.requests);
    expect(steady.spreadReason).toMatch(/learned baseline's own uncertainty/);
    const hotter = [...usual];
    hotter[5] = 2000;
    const verdict = judge.judge(closed(hotter, 11));
    expect(verdict.findings).toContain('hotspot');
    expect(verdict.flagged.map((flag) => flag.shard)).toEqual(['5']);
    // The incident (confirm 1) keeps the faulty windows out of the baseline.
    const learned = verdict.baseline?.learnedWindows;
    const next = judge.judge(closed(hotter, 12));
    expect(next.baseline?.learnedWindows).toBe(learned);
    expect(next.incidents.map((incident) => incident.shard)).toEqual(['5']);
  });
});
