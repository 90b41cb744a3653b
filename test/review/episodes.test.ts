import { describe, expect, it } from 'vitest';
import type { Judgement } from '../../src/judge/judgement.js';
import { EpisodeFinder } from '../../src/review/episodes.js';
import type { ReviewWindow } from '../../src/review/review-window.js';
import { judgeScenario, reviewOf } from './judged-scenario.js';

const windowMs = 10_000;

// Ground truth: the plants of the built-in scenarios (src/scenario/built-in-scenarios.ts),
// as the scenario run reports them (ScenarioRun.truth.events). An episode must start and
// end within one window of its plant.
describe('episodes carry what made the shard hot, from the keys (the keyed drills)', () => {
  it('hot-key: the episode on the planted shard names the hot key in most of its windows', () => {
    // Ground truth: the hot-key drill plants one key (ScenarioRun.truth.events) on one shard.
    const judged = judgeScenario('hot-key', { keys: true, seed: 7 });
    const [plant] = judged.run.truth.events;
    const review = reviewOf(judged);
    const hot = review.episodes.filter((e) => e.finding === 'hotspot' && e.shard === plant.shard);
    expect(hot).toHaveLength(1);
    expect(hot[0].causes[0].cause).toBe('hot key');
    expect(hot[0].causes[0].windows).toBeGreaterThanOrEqual(Math.ceil(hot[0].windows / 2));
    expect(hot[0].peakCause).toContain('hot key');
  });

  it('without keys an episode has no cause', () => {
    const review = reviewOf(judgeScenario('hotspot'));
    for (const episode of review.episodes) {
      expect(episode.causes).toEqual([]);
      expect(episode.peakCause).toBeNull();
    }
  });
});

describe('episodes match the planted faults', () => {
  it('hotspot: one hotspot episode on seat-17 from 1:00 to 3:00', () => {
    const judged = judgeScenario('hotspot');
    const [plant] = judged.run.truth.events;
    const episodes = reviewOf(judged).episodes.filter((e) => e.finding === 'hotspot');
    expect(episodes).toHaveLength(1);
    expect(episodes[0].shard).toBe(plant.shard);
    expect(Math.abs(episodes[0].start - plant.beginsAt)).toBeLessThanOrEqual(windowMs);
    expect(Math.abs(episodes[0].end - plant.endsAt)).toBeLessThanOrEqual(windowMs);
    // 1.5x its fair share: the peak relative load is near 1.5 (Poisson noise of about
    // 1000 requests per shard per window, sd about 3%, so within 0.15 from memory).
    expect(episodes[0].peakRelative).toBeGreaterThan(1.5);
    expect(episodes[0].peakRelative).toBeLessThan(1.65);
  });

  it('dead-shard: one cold episode on seat-42 for the two minutes it is dead', () => {
    const judged = judgeScenario('dead-shard');
    const [plant] = judged.run.truth.events;
    const review = reviewOf(judged);
    const cold = review.episodes.filter((e) => e.finding === 'cold' && e.shard === 'seat-42');
    expect(cold).toHaveLength(1);
    // Nothing else. (Before the learned spread, seed 1 also flagged seat-04 once at 3:30,
    // p = 3.7e-4: a chance finding; judged against the learned spread it is not one.)
    const others = review.episodes.filter((e) => e.shard !== null && e.shard !== 'seat-42');
    expect(others.map((e) => [e.finding, e.shard, e.windows])).toEqual([]);
    expect(Math.abs(cold[0].start - plant.beginsAt)).toBeLessThanOrEqual(windowMs);
    expect(Math.abs(cold[0].end - plant.endsAt)).toBeLessThanOrEqual(windowMs);
    expect(cold[0].peakRelative).toBe(0);
    // A dead shard serves nothing: the requests below its fair share are all of its fair
    // share, N/m summed over the episode's windows (arithmetic on the judged windows).
    const fair = judged.windows
      .filter(({ window }) => window.start >= cold[0].start && window.end <= cold[0].end)
      .reduce((sum, { window }) => sum + window.total / 64, 0);
    expect(cold[0].aboveFairShare).toBeCloseTo(-fair, 6);
    expect(review.episodes.filter((e) => e.finding === 'hotspot')).toHaveLength(0);
  });

  it('failover: seat-42 cold and seat-43 hot over the same span, both marked failover', () => {
    const judged = judgeScenario('failover');
    const [plant] = judged.run.truth.events;
    expect(plant.kind).toBe('failover');
    const episodes = reviewOf(judged).episodes.filter((e) => e.shard !== null);
    expect(episodes.map((e) => [e.finding, e.shard])).toEqual([
      ['cold', 'seat-42'],
      ['hotspot', 'seat-43'],
    ]);
    for (const episode of episodes) {
      expect(Math.abs(episode.start - plant.beginsAt)).toBeLessThanOrEqual(windowMs);
      expect(Math.abs(episode.end - plant.endsAt)).toBeLessThanOrEqual(windowMs);
      expect(episode.failoverWindows).toBe(episode.windows);
    }
  });

  it('chance: no per-shard episode when nothing is planted (seed 1)', () => {
    const review = reviewOf(judgeScenario('chance'));
    expect(review.episodes.filter((e) => e.shard !== null)).toEqual([]);
  });
});

describe('EpisodeFinder arithmetic', () => {
  // Two windows of 4 equal shards, 400 requests each (fair share 100); shard "a" flagged hot
  // at 160 and 130 with a ceiling of 1.2x (120 requests). Hand arithmetic: above fair share
  // 60 + 30 = 90; above the ceiling 40 + 10 = 50.
  const judgement = (count: number, start: number): Judgement =>
    ({
      window: { start: new Date(start).toISOString(), end: new Date(start + 10_000).toISOString() },
      findings: ['hotspot'],
      pattern: null,
      fullest: { shard: 'a', count, relative: count / 100, p: 1e-6 },
      ceiling: { relative: 1.2, requests: 120 },
      floor: { relative: 0.8, requests: 80 },
      flagged: [
        {
          shard: 'a',
          finding: 'hotspot',
          count,
          relative: count / 100,
          p: 1e-6,
          binomialP: 1e-7,
          streak: 1,
        },
      ],
    }) as unknown as Judgement;
  const window = (count: number, start: number): ReviewWindow => ({
    start,
    end: start + 10_000,
    counts: Float64Array.from([count, 80, 80, 400 - count - 160]),
    total: 400,
    shardIds: ['a', 'b', 'c', 'd'],
    shares: null,
    judgement: judgement(count, start),
  });

  it('sums the requests above the fair share and above the chance ceiling', () => {
    const finder = new EpisodeFinder();
    finder.add(window(160, 0));
    finder.add(window(130, 10_000));
    const [episode] = finder.episodes();
    expect(episode).toMatchObject({
      finding: 'hotspot',
      shard: 'a',
      start: 0,
      end: 20_000,
      windows: 2,
      peakRelative: 1.6,
      peakAt: 0,
      leastP: 1e-6,
    });
    expect(episode.aboveFairShare).toBeCloseTo(90, 9);
    expect(episode.beyondChance).toBeCloseTo(50, 9);
  });

  it('bridges a gap shorter than the allowed one, counting only the flagged windows', () => {
    const finder = new EpisodeFinder(1);
    finder.add(window(160, 0));
    finder.add({ ...window(100, 10_000), judgement: { ...judgement(100, 10_000), flagged: [] } });
    finder.add(window(130, 20_000));
    const episodes = finder.episodes();
    expect(episodes.map((e) => [e.start, e.end, e.windows])).toEqual([[0, 30_000, 2]]);
    expect(episodes[0].aboveFairShare).toBeCloseTo(90, 9);
  });

  it('splits episodes at a window without the flag', () => {
    const finder = new EpisodeFinder();
    finder.add(window(160, 0));
    finder.add({ ...window(100, 10_000), judgement: { ...judgement(100, 10_000), flagged: [] } });
    finder.add(window(130, 20_000));
    expect(finder.episodes().map((e) => [e.start, e.end])).toEqual([
      [0, 10_000],
      [20_000, 30_000],
    ]);
  });
});
