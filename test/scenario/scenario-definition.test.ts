import { describe, expect, it } from 'vitest';
import {
  checkDefinition,
  plantStrength,
  rateAt,
  sharesAt,
  type Plant,
  type ScenarioDefinition,
} from '../../src/scenario/scenario-definition.js';

const four: ScenarioDefinition = {
  name: 'four',
  summary: 'four equal shards for hand-worked examples',
  shardIds: ['a', 'b', 'c', 'd'],
  shares: { kind: 'equal' },
  requestsPerSecond: 100,
  tickMs: 1000,
  traffic: { kind: 'count reports' },
  plants: [],
  suggestedDurationMs: 60_000,
};

const equal = new Float64Array([0.25, 0.25, 0.25, 0.25]);
const indexOf = new Map(four.shardIds.map((id, index) => [id, index]));

function withPlants(plants: Plant[], extra: Partial<ScenarioDefinition> = {}): ScenarioDefinition {
  return { ...four, ...extra, plants };
}

function shares(definition: ScenarioDefinition, offsetMs: number): number[] {
  return [...sharesAt(definition, equal, indexOf, offsetMs, new Float64Array(4))];
}

function expectShares(actual: number[], expected: number[]): void {
  // Tolerance: a few double roundings.
  actual.forEach((value, index) => expect(value).toBeCloseTo(expected[index], 12));
}

describe('sharesAt', () => {
  it('gives a hotspot factor x its fair share and shrinks the others in proportion', () => {
    // Worked by hand: factor 2 on a of 4 equal shards: a = 0.5, the rest share 0.5 equally.
    const definition = withPlants([
      {
        kind: 'hotspot',
        shard: 'a',
        factor: 2,
        atMs: 10_000,
        riseMs: 10_000,
        holdMs: 10_000,
        fadeMs: 10_000,
      },
    ]);
    expectShares(shares(definition, 5_000), [0.25, 0.25, 0.25, 0.25]);
    expectShares(shares(definition, 25_000), [0.5, 1 / 6, 1 / 6, 1 / 6]);
    // Half way up the rise the factor is 1.5: a = 0.375, the rest (1 - 0.375) / 3.
    expectShares(shares(definition, 15_000), [0.375, 0.625 / 3, 0.625 / 3, 0.625 / 3]);
    // Half way down the fade, 1.5 again; after the fade, fair.
    expectShares(shares(definition, 35_000), [0.375, 0.625 / 3, 0.625 / 3, 0.625 / 3]);
    expectShares(shares(definition, 40_000), [0.25, 0.25, 0.25, 0.25]);
  });

  it('moves a dead shard to its failover neighbour, or spreads it over all others', () => {
    const failover = withPlants([
      { kind: 'dead', shard: 'a', atMs: 0, forMs: 10_000, failoverTo: 'b' },
    ]);
    expectShares(shares(failover, 1), [0, 0.5, 0.25, 0.25]);
    expectShares(shares(failover, 10_000), [0.25, 0.25, 0.25, 0.25]);
    const spread = withPlants([{ kind: 'dead', shard: 'a', atMs: 0, forMs: 10_000 }]);
    expectShares(shares(spread, 1), [0, 1 / 3, 1 / 3, 1 / 3]);
  });

  it('wobbles every share for an uneven plant', () => {
    // m = 4: sin(2 pi 3 i / 4) is 0, -1, 0, 1, so shares are (1, 1 - a, 1, 1 + a) / 4 for a = 0.2.
    const definition = withPlants([{ kind: 'uneven', amplitude: 0.2, atMs: 0, forMs: 10_000 }]);
    expectShares(shares(definition, 0), [0.25, 0.2, 0.25, 0.3]);
  });

  it('repeats plants every cycle', () => {
    const definition = withPlants([{ kind: 'dead', shard: 'a', atMs: 1000, forMs: 1000 }], {
      cycleMs: 5000,
    });
    expect(shares(definition, 1500)[0]).toBe(0);
    expect(shares(definition, 6500)[0]).toBe(0);
    expect(shares(definition, 4500)[0]).toBe(0.25);
  });
});

describe('rateAt', () => {
  it('swings with the diurnal curve and drops in a lull', () => {
    const definition = withPlants([{ kind: 'lull', factor: 0.1, atMs: 50_000, forMs: 10_000 }], {
      diurnal: { amplitude: 0.5, periodMs: 40_000 },
    });
    // 1 + 0.5 sin(2 pi t / 40 s): 1.5 at 10 s, 0.5 at 30 s; in the lull at 50 s (sin = 1) 1.5 x 0.1.
    expect(rateAt(definition, 10_000)).toBeCloseTo(150, 10);
    expect(rateAt(definition, 30_000)).toBeCloseTo(50, 10);
    expect(rateAt(definition, 50_000)).toBeCloseTo(15, 10);
  });
});

describe('plantStrength', () => {
  it('is 0 outside, 1 at full strength, linear on the ramps', () => {
    const plant: Plant = {
      kind: 'hotspot',
      shard: 'a',
      factor: 2,
      atMs: 100,
      riseMs: 100,
      holdMs: 100,
      fadeMs: 100,
    };
    expect([99, 100, 150, 200, 299, 350, 400].map((at) => plantStrength(plant, at))).toEqual([
      0, 0, 0.5, 1, 1, 0.5, 0,
    ]);
  });
});

describe('checkDefinition', () => {
  it('catches inconsistent definitions', () => {
    expect(() =>
      checkDefinition(
        withPlants([
          { kind: 'hotspot', shard: 'z', factor: 2, atMs: 0, riseMs: 0, holdMs: 1, fadeMs: 0 },
        ]),
      ),
    ).toThrow('plants a hotspot on unknown shard z');
    expect(() =>
      checkDefinition(
        withPlants([{ kind: 'dead', shard: 'a', atMs: 0, forMs: 1, failoverTo: 'a' }]),
      ),
    ).toThrow('not another shard');
    expect(() =>
      checkDefinition(
        withPlants([{ kind: 'lull', factor: 0.5, atMs: 0, forMs: 9000 }], { cycleMs: 5000 }),
      ),
    ).toThrow('outlasts its cycle');
    expect(() => checkDefinition({ ...four, shardIds: ['a', 'a'] })).toThrow('repeats a shard id');
    expect(() =>
      checkDefinition({ ...four, shares: { kind: 'weights', weights: [1, 2, 3] } }),
    ).toThrow('weight count');
    expect(() => checkDefinition(four)).not.toThrow();
  });
});
