import type { CountRecord } from '../window/count-record.js';
import { UsageError } from '../errors/usage-error.js';
import { ShardUniverse } from '../window/shard-universe.js';
import { builtInScenarios } from './built-in-scenarios.js';
import { ringShares } from './consistent-hash-ring.js';
import {
  biasedShardOfKey,
  drawIndex,
  placeKeys,
  shardOfKey,
  zipfProbabilities,
  type KeyPlacement,
} from './key-popularity.js';
import { RandomDraws } from './random-draws.js';
import {
  checkDefinition,
  plantEndMs,
  plantStrength,
  rateAt,
  sharesAt,
  type Plant,
  type ScenarioDefinition,
} from './scenario-definition.js';

/** One planted occurrence, in absolute epoch ms: what a verdict should find. */
export interface PlantedEvent {
  /**
   * `failover` is a dead shard whose traffic went to one neighbour (`to`); `hot key` a
   * key taking `share` of all traffic on `shard`; `biased partitioner` `factor` times the
   * fair share of the keys sent to `shard`.
   */
  readonly kind:
    'hotspot' | 'dead' | 'failover' | 'lull' | 'uneven' | 'hot key' | 'biased partitioner';
  /** The hot or dead shard (for a hot key, the shard its key lands on). */
  readonly shard?: string;
  /** The planted hot key. */
  readonly key?: string;
  /** Hot key: its share of all traffic. */
  readonly share?: number;
  /** The neighbour that takes a failed-over shard's traffic. */
  readonly to?: string;
  /** Hotspot: multiple of the fair share; lull: multiple of the rate; biased partitioner: multiple of the fair share of keys. */
  readonly factor?: number;
  /** Uneven: size of the share wobble. */
  readonly amplitude?: number;
  /** First instant with any effect. */
  readonly beginsAt: number;
  /** Full strength from here... */
  readonly fullFrom: number;
  /** ...to here (exclusive). */
  readonly fullUntil: number;
  /** No effect from here on. */
  readonly endsAt: number;
}

/** What the simulated cluster really did, for checking verdicts against. */
export interface GroundTruth {
  readonly scenario: string;
  readonly seed: number;
  readonly startMs: number;
  /** Exclusive; Infinity for an endless run. */
  readonly endMs: number;
  /** The shares the universe declares (equal, weights or the ring's arcs). */
  readonly declaredShares: Float64Array;
  /**
   * Expected shares with nothing planted. Equal to the declared shares for
   * count reports; for Zipf-keyed traffic, each shard's summed key popularity.
   */
  readonly trafficShares: Float64Array;
  /** Every planted occurrence in the run (for an endless run: in its first day). */
  readonly events: readonly PlantedEvent[];
}

/** Where and how long a scenario runs. */
export interface ScenarioOptions {
  /** `--seed`: a whole number from 0 to 2^32 - 1. */
  readonly seed: number;
  /** `--start`: epoch ms of the first tick. */
  readonly startMs: number;
  /** `--duration` in ms; Infinity for a live demo that runs until stopped. */
  readonly durationMs: number;
}

const day = 24 * 60 * 60 * 1000;

/**
 * A seeded run of a simulated cluster: its universe, its ground truth and
 * its records. The records are a pure function of (scenario, seed, start,
 * duration): every call to {@link records} yields the same records in the
 * same order, as fast as they can be drawn; pacing them to a wall clock is
 * the source's job.
 */
export class ScenarioRun {
  readonly definition: ScenarioDefinition;
  /** Declared universe with the declared shares. */
  readonly universe: ShardUniverse;
  readonly truth: GroundTruth;
  readonly seed: number;
  readonly startMs: number;
  readonly endMs: number;
  private readonly indexOf: ReadonlyMap<string, number>;
  private readonly keys: KeyPlacement | null;
  /** Keys as a biased partitioner places them (while its plant is active), else null. */
  private readonly biasedKeys: KeyPlacement | null;
  /** For keyed traffic: the plants that act on shares (dead shards and hot keys route instead). */
  private readonly shareDefinition: ScenarioDefinition;

  /** Use {@link runScenario}. */
  constructor(definition: ScenarioDefinition, options: ScenarioOptions) {
    checkDefinition(definition);
    const { seed, startMs, durationMs } = options;
    if (!Number.isSafeInteger(startMs) || startMs < 0) {
      throw new UsageError('--start', String(startMs), 'is not a time in epoch milliseconds');
    }
    if (!(durationMs > 0) || (Number.isFinite(durationMs) && !Number.isSafeInteger(durationMs))) {
      throw new UsageError(
        '--duration',
        `${durationMs}ms`,
        'is not a whole number of milliseconds above zero',
      );
    }
    this.definition = definition;
    this.seed = seed;
    this.startMs = startMs;
    this.endMs = startMs + durationMs;
    this.indexOf = new Map(definition.shardIds.map((id, index) => [id, index]));
    const declaredShares = declaredLayout(definition, new RandomDraws(seed));
    this.universe = ShardUniverse.fromWeights(definition.shardIds, Array.from(declaredShares));
    const shardCount = definition.shardIds.length;
    const popularity =
      definition.traffic.kind === 'request events'
        ? zipfProbabilities(definition.traffic.keyCount, definition.traffic.zipfExponent)
        : null;
    const prefix = definition.traffic.kind === 'request events' ? definition.traffic.keyPrefix : '';
    this.keys = popularity === null ? null : placeKeys(prefix, popularity, shardCount);
    const bias = definition.plants.find((plant) => plant.kind === 'biased partitioner');
    this.biasedKeys =
      popularity === null || bias === undefined
        ? null
        : placeKeys(prefix, popularity, shardCount, (key) =>
            biasedShardOfKey(
              key,
              shardCount,
              this.indexOf.get(bias.shard) as number,
              bias.keyFactor,
            ),
          );
    this.shareDefinition =
      popularity === null
        ? definition
        : {
            ...definition,
            plants: definition.plants.filter(
              (plant) => plant.kind !== 'dead' && plant.kind !== 'hot key',
            ),
          };
    this.truth = {
      scenario: definition.name,
      seed,
      startMs,
      endMs: this.endMs,
      declaredShares,
      trafficShares: this.keys === null ? declaredShares : this.keys.shares,
      events: this.eventsBetween(startMs, Math.min(this.endMs, startMs + day)),
    };
  }

  /** Reporting interval in ms. */
  get tickMs(): number {
    return this.definition.tickMs;
  }

  /** Expected share of each shard at an instant, plants included. O(m x active plants). */
  expectedShares(ts: number): Float64Array {
    const offset = ts - this.startMs;
    const m = this.definition.shardIds.length;
    if (this.keys === null) {
      return sharesAt(
        this.definition,
        this.truth.trafficShares,
        this.indexOf,
        offset,
        new Float64Array(m),
      );
    }
    // Keyed traffic: the owners' shares, less the hot keys' part, plus the hot keys on
    // their shards; then each dead shard's part to its neighbour (or evenly to the others,
    // which is what rehashing its keys gives on average).
    const placement = this.placementAt(offset);
    const owners = sharesAt(
      this.shareDefinition,
      placement.shares,
      this.indexOf,
      offset,
      new Float64Array(m),
    );
    const hot = this.hotKeysAt(offset);
    const hotTotal = hot.reduce((sum, entry) => sum + entry.share, 0);
    const shares = owners.map((share) => share * (1 - hotTotal));
    for (const entry of hot) shares[entry.shard] += entry.share;
    const dead = this.deadAt(offset);
    for (const plant of this.definition.plants) {
      if (plant.kind !== 'dead' || !dead.has(this.indexOf.get(plant.shard) as number)) continue;
      const index = this.indexOf.get(plant.shard) as number;
      const lost = shares[index];
      shares[index] = 0;
      if (plant.failoverTo !== undefined) {
        shares[this.indexOf.get(plant.failoverTo) as number] += lost;
      } else {
        const live = m - dead.size;
        for (let shard = 0; shard < m; shard++) if (!dead.has(shard)) shares[shard] += lost / live;
      }
    }
    return shares;
  }

  /** Expected total requests per second at an instant. */
  expectedRate(ts: number): number {
    return rateAt(this.definition, ts - this.startMs);
  }

  /** The planted occurrences overlapping [fromMs, toMs), in start order. */
  eventsBetween(fromMs: number, toMs: number): PlantedEvent[] {
    const events: PlantedEvent[] = [];
    const cycle = this.definition.cycleMs;
    const firstCycle =
      cycle === undefined ? 0 : Math.max(0, Math.floor((fromMs - this.startMs) / cycle) - 1);
    const lastCycle = cycle === undefined ? 0 : Math.floor((toMs - this.startMs) / cycle);
    for (let index = firstCycle; index <= lastCycle; index++) {
      const cycleStart = this.startMs + index * (cycle ?? 0);
      for (const plant of this.definition.plants) {
        const event = plantedEvent(plant, cycleStart, this.definition.shardIds);
        const endsAt = Math.min(event.endsAt, this.endMs);
        if (event.beginsAt < toMs && endsAt > fromMs && event.beginsAt < this.endMs) {
          events.push(event);
        }
      }
    }
    return events.sort((left, right) => left.beginsAt - right.beginsAt);
  }

  /**
   * The run's records, in time order: per tick one count report per live
   * shard (dead shards stay silent), or the tick's request events sorted by
   * time. Per shard per tick the load is Poisson with mean rate x tick x
   * share, so given a window's total the counts are exactly multinomial with
   * the expected shares (a standard property of independent Poisson counts).
   */
  *records(): Generator<CountRecord, void, undefined> {
    const draws = new RandomDraws(this.seed);
    // Replays the draws that laid out a ring, so the traffic stream that
    // follows is the same on every call.
    declaredLayout(this.definition, draws);
    const { shardIds, tickMs } = this.definition;
    const shares = new Float64Array(shardIds.length);
    for (let tickStart = this.startMs; tickStart < this.endMs; tickStart += tickMs) {
      const tickLength = Math.min(tickMs, this.endMs - tickStart);
      const middle = tickStart - this.startMs + tickLength / 2;
      const base = this.keys === null ? this.truth.trafficShares : this.placementAt(middle).shares;
      sharesAt(this.shareDefinition, base, this.indexOf, middle, shares);
      const expected = (rateAt(this.definition, middle) * tickLength) / 1000;
      const dead = this.deadAt(middle);
      if (this.keys === null) {
        for (let shard = 0; shard < shardIds.length; shard++) {
          if (dead.has(shard)) continue;
          yield {
            ts: tickStart,
            shard: shardIds[shard],
            count: draws.poisson(expected * shares[shard]),
          };
        }
      } else {
        yield* this.tickEvents(draws, tickStart, tickLength, expected, shares, middle);
      }
    }
  }

  /**
   * One tick of request events. Per owner shard (the shard the partitioner gives a key) a
   * Poisson count, each request's key drawn from the owner's keys by popularity; then the
   * planted hot keys' own Poisson counts; every request is served by its owner unless the
   * owner is dead (then by its failover neighbour, or by a second hash of the key over the
   * live shards). With nothing planted this draws exactly what it always drew.
   */
  private tickEvents(
    draws: RandomDraws,
    tickStart: number,
    tickLength: number,
    expected: number,
    shares: Float64Array,
    middle: number,
  ): CountRecord[] {
    const events: CountRecord[] = [];
    const byShard = this.placementAt(middle).byShard;
    const shardIds = this.definition.shardIds;
    const hot = this.hotKeysAt(middle);
    const keep = 1 - hot.reduce((sum, entry) => sum + entry.share, 0);
    const dead = this.deadAt(middle);
    const serving = (owner: number, key: string | undefined): number =>
      dead.has(owner) ? this.servingFor(owner, key, dead) : owner;
    for (let shard = 0; shard < shares.length; shard++) {
      const requests = draws.poisson(expected * shares[shard] * keep);
      const { keys, cumulative } = byShard[shard];
      for (let request = 0; request < requests; request++) {
        const ts = tickStart + Math.floor(draws.uniform() * tickLength);
        if (keys.length === 0) {
          events.push({ ts, shard: shardIds[serving(shard, undefined)], count: 1 });
          continue;
        }
        const key = keys[drawIndex(cumulative, draws.uniform())];
        events.push({ ts, shard: shardIds[serving(shard, key)], count: 1, key });
      }
    }
    for (const entry of hot) {
      const requests = draws.poisson(expected * entry.share);
      const shardId = shardIds[serving(entry.shard, entry.key)];
      for (let request = 0; request < requests; request++) {
        const ts = tickStart + Math.floor(draws.uniform() * tickLength);
        events.push({ ts, shard: shardId, count: 1, key: entry.key });
      }
    }
    // Array.prototype.sort is stable, so equal times keep their drawing order.
    return events.sort((left, right) => left.ts - right.ts);
  }

  /** The shard serving a dead owner's request: the failover neighbour, or a live shard by a second hash. */
  private servingFor(owner: number, key: string | undefined, dead: ReadonlySet<number>): number {
    const m = this.definition.shardIds.length;
    for (const plant of this.definition.plants) {
      if (plant.kind === 'dead' && this.indexOf.get(plant.shard) === owner) {
        if (plant.failoverTo !== undefined) return this.indexOf.get(plant.failoverTo) as number;
      }
    }
    let shard = shardOfKey(`again:${key ?? ''}`, m);
    while (dead.has(shard) && dead.size < m) shard = (shard + 1) % m;
    return shard;
  }

  /** The key placement in force at an offset: the biased partitioner's while it is planted. */
  private placementAt(offsetMs: number): KeyPlacement {
    const keys = this.keys as KeyPlacement;
    if (this.biasedKeys === null) return keys;
    const cycle = this.definition.cycleMs;
    const cycleOffset = cycle === undefined ? offsetMs : offsetMs % cycle;
    const active = this.definition.plants.some(
      (plant) => plant.kind === 'biased partitioner' && plantStrength(plant, cycleOffset) > 0,
    );
    return active ? this.biasedKeys : keys;
  }

  /** The planted hot keys active at an offset, with the shard their key lands on. */
  private hotKeysAt(offsetMs: number): { key: string; share: number; shard: number }[] {
    const cycle = this.definition.cycleMs;
    const cycleOffset = cycle === undefined ? offsetMs : offsetMs % cycle;
    const hot: { key: string; share: number; shard: number }[] = [];
    for (const plant of this.definition.plants) {
      if (plant.kind === 'hot key' && plantStrength(plant, cycleOffset) > 0) {
        hot.push({ key: plant.key, share: plant.share, shard: this.shardOf(plant.key, offsetMs) });
      }
    }
    return hot;
  }

  /** The owner shard of a key under the partitioner in force at an offset. */
  private shardOf(key: string, offsetMs: number): number {
    const m = this.definition.shardIds.length;
    const bias = this.definition.plants.find((plant) => plant.kind === 'biased partitioner');
    if (bias !== undefined && this.placementAt(offsetMs) === this.biasedKeys) {
      return biasedShardOfKey(key, m, this.indexOf.get(bias.shard) as number, bias.keyFactor);
    }
    return shardOfKey(key, m);
  }

  private deadAt(offsetMs: number): Set<number> {
    const dead = new Set<number>();
    const cycle = this.definition.cycleMs;
    const cycleOffset = cycle === undefined ? offsetMs : offsetMs % cycle;
    for (const plant of this.definition.plants) {
      if (plant.kind === 'dead' && plantStrength(plant, cycleOffset) > 0) {
        dead.add(this.indexOf.get(plant.shard) as number);
      }
    }
    return dead;
  }
}

/**
 * Starts a seeded run of a built-in scenario (by name) or of a definition.
 * An unknown name is a {@link UsageError} listing the built-in names.
 *
 * @example runScenario('hotspot', {seed: 7, startMs: Date.UTC(2025, 11, 1), durationMs: 240_000})
 */
export function runScenario(
  scenario: string | ScenarioDefinition,
  options: ScenarioOptions,
): ScenarioRun {
  const definition = typeof scenario === 'string' ? builtInScenarios.get(scenario) : scenario;
  if (definition === undefined) {
    throw new UsageError(
      '--scenario',
      String(scenario),
      `is not a built-in scenario (${[...builtInScenarios.keys()].join(', ')})`,
    );
  }
  return new ScenarioRun(definition, options);
}

/** The declared shares; a ring layout consumes draws, always first in the stream. */
function declaredLayout(definition: ScenarioDefinition, draws: RandomDraws): Float64Array {
  const shardCount = definition.shardIds.length;
  const layout = definition.shares;
  if (layout.kind === 'ring') return ringShares(shardCount, layout.tokensPerShard, draws);
  const weights =
    layout.kind === 'weights' ? layout.weights : new Array<number>(shardCount).fill(1);
  const total = weights.reduce((sum, weight) => sum + weight, 0);
  return Float64Array.from(weights, (weight) => weight / total);
}

function plantedEvent(plant: Plant, cycleStart: number, shardIds: readonly string[]): PlantedEvent {
  const beginsAt = cycleStart + plant.atMs;
  const endsAt = cycleStart + plantEndMs(plant);
  switch (plant.kind) {
    case 'hotspot':
      return {
        kind: 'hotspot',
        shard: plant.shard,
        factor: plant.factor,
        beginsAt,
        fullFrom: beginsAt + plant.riseMs,
        fullUntil: beginsAt + plant.riseMs + plant.holdMs,
        endsAt,
      };
    case 'dead':
      return plant.failoverTo === undefined
        ? {
            kind: 'dead',
            shard: plant.shard,
            beginsAt,
            fullFrom: beginsAt,
            fullUntil: endsAt,
            endsAt,
          }
        : {
            kind: 'failover',
            shard: plant.shard,
            to: plant.failoverTo,
            beginsAt,
            fullFrom: beginsAt,
            fullUntil: endsAt,
            endsAt,
          };
    case 'lull':
      return {
        kind: 'lull',
        factor: plant.factor,
        beginsAt,
        fullFrom: beginsAt,
        fullUntil: endsAt,
        endsAt,
      };
    case 'uneven':
      return {
        kind: 'uneven',
        amplitude: plant.amplitude,
        beginsAt,
        fullFrom: beginsAt,
        fullUntil: endsAt,
        endsAt,
      };
    case 'hot key':
      return {
        kind: 'hot key',
        key: plant.key,
        share: plant.share,
        shard: definitionShardOfKey(plant.key, shardIds),
        beginsAt,
        fullFrom: beginsAt,
        fullUntil: endsAt,
        endsAt,
      };
    case 'biased partitioner':
      return {
        kind: 'biased partitioner',
        shard: plant.shard,
        factor: plant.keyFactor,
        beginsAt,
        fullFrom: beginsAt,
        fullUntil: endsAt,
        endsAt,
      };
  }
}

/** The shard a hot key lands on under plain hashing (a hot key plant never overlaps a biased partitioner in the built-ins). */
function definitionShardOfKey(key: string, shardIds: readonly string[]): string {
  return shardIds[shardOfKey(key, shardIds.length)];
}
