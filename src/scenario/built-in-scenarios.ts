import type { ScenarioDefinition } from './scenario-definition.js';

// Every built-in scenario is set at Lanternfly Tickets, an invented ticket
// seller whose seat-inventory cache runs on 64 shards, seat-00..seat-63.
// Made-up data for demos, drills and tests only.

/** The 64 shard ids of the simulated seat-inventory cache, seat-00..seat-63 (`--shards seat-00..seat-63`). */
export const seatShardIds: readonly string[] = Array.from(
  { length: 64 },
  (_, index) => `seat-${String(index).padStart(2, '0')}`,
);

const second = 1000;
const minute = 60 * second;

/**
 * 6400 requests/s over 64 shards is 1000 per shard per 10 s window: enough
 * for a +20% hotspot to stand far above the chance ceiling (about +14% at
 * alpha 0.001), so each plant is plain to see.
 */
const baseRate = 6400;

/** The seat fleet most drills run on: its shards, equal shares, the base rate, 1 s ticks. */
const seatFleet = {
  shardIds: seatShardIds,
  shares: { kind: 'equal' },
  requestsPerSecond: baseRate,
  tickMs: second,
} as const;

const demo: ScenarioDefinition = {
  name: 'demo',
  summary:
    'Lanternfly Tickets seat cache: a hotspot on seat-17 rises at 0:20 and fades by 1:40, seat-42 fails over to seat-43 at 2:30, a lull at 4:20, an uneven spread at 5:00; repeats every 6 minutes',
  ...seatFleet,
  traffic: { kind: 'count reports' },
  diurnal: { amplitude: 0.2, periodMs: 6 * minute },
  plants: [
    {
      kind: 'hotspot',
      shard: 'seat-17',
      factor: 1.8,
      atMs: 20 * second,
      riseMs: 10 * second,
      holdMs: 50 * second,
      fadeMs: 20 * second,
    },
    {
      kind: 'dead',
      shard: 'seat-42',
      atMs: 150 * second,
      forMs: 80 * second,
      failoverTo: 'seat-43',
    },
    // 0.4% of the traffic, at the diurnal low, is about 3 requests per
    // shard per 10 s window: the detectable excess climbs above 3x ("too
    // little traffic").
    { kind: 'lull', factor: 0.004, atMs: 260 * second, forMs: 40 * second },
    // A 7% wobble (CV 0.05): the spread test rejects (phi = 1 + (N/m) CV^2,
    // about 3 at the diurnal low) while no shard reaches the +20% practical
    // floor of a hotspot.
    { kind: 'uneven', amplitude: 0.07, atMs: 300 * second, forMs: 30 * second },
  ],
  cycleMs: 6 * minute,
  suggestedDurationMs: 6 * minute,
};
const chance: ScenarioDefinition = {
  name: 'chance',
  summary:
    'Lanternfly Tickets seat cache under pure random placement: equal shares, nothing planted',
  ...seatFleet,
  traffic: { kind: 'count reports' },
  plants: [],
  suggestedDurationMs: 5 * minute,
};

const hotspot: ScenarioDefinition = {
  name: 'hotspot',
  summary: 'seat-17 takes 1.5x its fair share from 1:00 to 3:00 (a popular show going on sale)',
  ...seatFleet,
  traffic: { kind: 'count reports' },
  plants: [
    {
      kind: 'hotspot',
      shard: 'seat-17',
      factor: 1.5,
      atMs: minute,
      riseMs: 0,
      holdMs: 2 * minute,
      fadeMs: 0,
    },
  ],
  suggestedDurationMs: 4 * minute,
};

const deadShard: ScenarioDefinition = {
  name: 'dead-shard',
  summary: 'seat-42 serves nothing from 1:00 to 3:00; its traffic spreads over all other shards',
  ...seatFleet,
  traffic: { kind: 'count reports' },
  plants: [{ kind: 'dead', shard: 'seat-42', atMs: minute, forMs: 2 * minute }],
  suggestedDurationMs: 4 * minute,
};

const failover: ScenarioDefinition = {
  name: 'failover',
  summary:
    'seat-42 dies from 1:00 to 3:00 and its neighbour seat-43 takes all its traffic (2x its share)',
  ...seatFleet,
  traffic: { kind: 'count reports' },
  plants: [
    { kind: 'dead', shard: 'seat-42', atMs: minute, forMs: 2 * minute, failoverTo: 'seat-43' },
  ],
  suggestedDurationMs: 4 * minute,
};

const zipfKeys: ScenarioDefinition = {
  name: 'zipf-keys',
  summary:
    'request events for 5000 performances with Zipf(0.9) popularity hashed to 64 shards: hot keys make hot shards with perfect hashing',
  shardIds: seatShardIds,
  shares: { kind: 'equal' },
  requestsPerSecond: 1000,
  tickMs: second,
  traffic: { kind: 'request events', keyCount: 5000, zipfExponent: 0.9, keyPrefix: 'perf-' },
  plants: [],
  suggestedDurationMs: 3 * minute,
};

const weighted: ScenarioDefinition = {
  name: 'weighted',
  summary:
    'a consistent-hash ring with 16 tokens per shard: shares vary by about 25%, placement is perfect; judge with the shard map',
  shardIds: seatShardIds,
  shares: { kind: 'ring', tokensPerShard: 16 },
  requestsPerSecond: baseRate,
  tickMs: second,
  traffic: { kind: 'count reports' },
  plants: [],
  suggestedDurationMs: 5 * minute,
};

const diurnal: ScenarioDefinition = {
  name: 'diurnal',
  summary: 'equal shares, traffic swinging 60% above and below its mean once a day',
  ...seatFleet,
  traffic: { kind: 'count reports' },
  diurnal: { amplitude: 0.6, periodMs: 24 * 60 * minute },
  plants: [],
  suggestedDurationMs: 24 * 60 * minute,
};

/**
 * Keyed traffic for the three cause drills: 16 000 performances with Zipf(0.5)
 * popularity, about 235 keys and 1000 requests per shard per 10 s window. The most
 * popular performance, perf-1, takes 0.4% of all traffic (a quarter of a fair share), so
 * its shard runs about 1.25x hot with nothing planted: a small hot key of its own.
 */
const performanceTraffic = {
  kind: 'request events',
  keyCount: 16_000,
  zipfExponent: 0.5,
  keyPrefix: 'perf-',
} as const;

const hotKey: ScenarioDefinition = {
  name: 'hot-key',
  summary:
    'request events for 16000 performances; from 1:00 to 3:00 the presale code "presale:LFT-7781" takes 1.5% of all traffic (about twice its shard\'s fair share)',
  ...seatFleet,
  traffic: performanceTraffic,
  plants: [
    { kind: 'hot key', key: 'presale:LFT-7781', share: 0.015, atMs: minute, forMs: 2 * minute },
  ],
  suggestedDurationMs: 4 * minute,
};

const biasedPartitioner: ScenarioDefinition = {
  name: 'biased-partitioner',
  summary:
    'request events for 16000 performances; from 1:00 to 3:00 a bad partitioner deploy sends 1.8x its fair share of the keys to seat-17',
  ...seatFleet,
  traffic: performanceTraffic,
  plants: [
    {
      kind: 'biased partitioner',
      shard: 'seat-17',
      keyFactor: 1.8,
      atMs: minute,
      forMs: 2 * minute,
    },
  ],
  suggestedDurationMs: 4 * minute,
};

const keyedFailover: ScenarioDefinition = {
  name: 'keyed-failover',
  summary:
    'request events for 16000 performances; seat-42 dies from 1:00 to 3:00 and its keys fail over to seat-43',
  ...seatFleet,
  traffic: performanceTraffic,
  plants: [
    { kind: 'dead', shard: 'seat-42', atMs: minute, forMs: 2 * minute, failoverTo: 'seat-43' },
  ],
  suggestedDurationMs: 4 * minute,
};

/** The built-in scenarios by name (`--scenario NAME`). */
export const builtInScenarios: ReadonlyMap<string, ScenarioDefinition> = new Map(
  [
    demo,
    chance,
    hotspot,
    deadShard,
    failover,
    zipfKeys,
    weighted,
    diurnal,
    hotKey,
    biasedPartitioner,
    keyedFailover,
  ].map((definition) => [definition.name, definition]),
);
