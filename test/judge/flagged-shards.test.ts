import { describe, expect, it } from 'vitest';
import { ChanceMemo } from '../../src/judge/chance-memo.js';
import { flagShards } from '../../src/judge/flagged-shards.js';
import { trackingKey } from '../../src/judge/incident-tracker.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

// Reference values from test/judge/reference/make-flagged-reference.py: extreme-shard tails
// of the multinomial summed exactly in rational arithmetic (Python fractions), binomial
// tails from scipy 1.17.1 (stats.binom.sf / cdf). Extreme-shard p-values are held to the
// accuracy bar of docs/model.md (relative 1e-3); binomial tails to 1e-9.

function expectRelative(actual: number, expected: number, tolerance: number): void {
  expect(Math.abs(actual / expected - 1), `${actual} against ${expected}`).toBeLessThanOrEqual(
    tolerance,
  );
}

describe('flagShards', () => {
  it('two equal shards, 70 and 30 of 100: each side against its extreme-shard law', () => {
    // m = 2: P(max >= 70) = P(min <= 30) = 2 P(Binomial(100, 1/2) >= 70) = 7.8501396455936696e-5
    // (exact sum; scipy 2 * binom.sf(69, 100, 0.5) agrees); the binomial tail beside it is
    // binom.sf(69, 100, 0.5) = 3.925069822796835e-5.
    const counts = [70, 30];
    const streaks = new Map([
      [trackingKey(0, 'hotspot'), 3],
      [trackingKey(1, 'cold'), 2],
    ]);
    const flagged = flagShards(
      new ChanceMemo(),
      ShardUniverse.ofCount(2),
      10,
      [0],
      [1],
      { total: 100, shardCount: 2, shares: null },
      'v1',
      counts,
      counts,
      100,
      null,
      streaks,
    );
    expect(
      flagged.map(({ shard, finding, count, relative, streak }) => ({
        shard,
        finding,
        count,
        relative,
        streak,
      })),
    ).toEqual([
      { shard: '0', finding: 'hotspot', count: 70, relative: 1.4, streak: 3 },
      { shard: '1', finding: 'cold', count: 30, relative: 0.6, streak: 2 },
    ]);
    for (const entry of flagged) {
      expectRelative(entry.p, 7.8501396455936696e-5, 1e-3);
      expectRelative(entry.binomialP, 3.925069822796835e-5, 1e-9);
    }
  });

  it('at most --max-flagged per side and in all, the strongest first by its p', () => {
    // m = 4 equal shards, N = 400: 130, 125, 75, 70. Hot candidates 0 and 1, cold 3.
    // Exact: P(max >= 130) = 0.001809721578084163, P(max >= 125) = 0.011221047725104072,
    // P(min <= 70) = 0.00083765681188747076. With one flag allowed per side, shard 1 is not
    // judged; of shard 0 and shard 3 the cold one has the smaller p and comes first.
    const counts = [130, 125, 75, 70];
    const run = (maxFlagged: number) =>
      flagShards(
        new ChanceMemo(),
        ShardUniverse.ofCount(4),
        maxFlagged,
        [1, 0],
        [3],
        { total: 400, shardCount: 4, shares: null },
        'v1',
        counts,
        counts,
        400,
        null,
        new Map(),
      );
    const two = run(2);
    expect(two.map((entry) => [entry.shard, entry.finding, entry.streak])).toEqual([
      ['3', 'cold', 0],
      ['0', 'hotspot', 0],
    ]);
    expectRelative(two[0].p, 0.00083765681188747076, 1e-3);
    expectRelative(two[1].p, 0.001809721578084163, 1e-3);
    // scipy: binom.cdf(70, 400, 0.25) and binom.sf(129, 400, 0.25).
    expectRelative(two[0].binomialP, 0.0002094144182995772, 1e-9);
    expectRelative(two[1].binomialP, 0.0004524305519860247, 1e-9);
    expect(run(1).map((entry) => entry.shard)).toEqual(['3']);
    const all = run(3);
    expect(all.map((entry) => entry.shard)).toEqual(['3', '0', '1']);
    expectRelative(all[2].p, 0.011221047725104072, 1e-3);
  });

  it('judges the divided counts but reports the raw ones', () => {
    // Counts divided by 2 (robust mode): 35 and 15 of 50 are judged, 70 and 30 of 100 shown.
    // Relative load is the raw count over the raw fair share: 70 / 50.
    const flagged = flagShards(
      new ChanceMemo(),
      ShardUniverse.ofCount(2),
      10,
      [0],
      [],
      { total: 50, shardCount: 2, shares: null },
      'v1',
      [35, 15],
      [70, 30],
      100,
      null,
      new Map(),
    );
    expect(flagged).toHaveLength(1);
    expect(flagged[0]).toMatchObject({ shard: '0', count: 70, relative: 1.4 });
    // The p is of the judged counts: exact P(max >= 35 of 50) = 0.0066004479668109184;
    // scipy binom.sf(34, 50, 0.5) = 0.003300223983405459.
    expectRelative(flagged[0].p, 0.0066004479668109184, 1e-3);
    expectRelative(flagged[0].binomialP, 0.003300223983405459, 1e-9);
  });
});
