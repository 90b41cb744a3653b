import type { CountRecord } from '../window/count-record.js';
import { UsageError } from '../window/errors.js';
import { ShardUniverse } from '../window/shard-universe.js';
import { builtInScenarios } from './built-in-scenarios.js';
import { ringShares } from './consistent-hash-ring.js';
import { drawIndex, placeKeys, zipfProbabilities, type KeyPlacement } from './key-popularity.js';
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
  /** `failover` is a dead shard whose traffic went to one neighbour (`to`). */
  readonly kind: 'hotspot' | 'dead' | 'failover' | 'lull' | 'uneven';
  /** The hot or dead shard. */
  readonly shard?: string;
  /** The neighbour that takes a failed-over shard's traffic. */
  readonly to?: string;
  /** Hotspot: multiple of the fair share; lull: multiple of the rate. */
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
    this.keys =
      definition.traffic.kind === 'request events'
        ? placeKeys(
            definition.traffic.keyPrefix,
            zipfProbabilities(definition.traffic.keyCount, definition.traffic.zipfExponent),
            definition.shardIds.length,
          )
        : null;
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
    return sharesAt(
      this.definition,
      this.truth.trafficShares,
      this.indexOf,
      ts - this.startMs,
      new Float64Array(this.definition.shardIds.length),
    );
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
        const event = plantedEvent(plant, cycleStart);
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
      sharesAt(this.definition, this.truth.trafficShares, this.indexOf, middle, shares);
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
        yield* this.tickEvents(draws, tickStart, tickLength, expected, shares);
      }
    }
  }

  private tickEvents(
    draws: RandomDraws,
    tickStart: number,
    tickLength: number,
    expected: number,
    shares: Float64Array,
  ): CountRecord[] {
    const events: CountRecord[] = [];
    const byShard = (this.keys as KeyPlacement).byShard;
    for (let shard = 0; shard < shares.length; shard++) {
      const requests = draws.poisson(expected * shares[shard]);
      const { keys, cumulative } = byShard[shard];
      for (let request = 0; request < requests; request++) {
        const ts = tickStart + Math.floor(draws.uniform() * tickLength);
        const shardId = this.definition.shardIds[shard];
        events.push(
          keys.length === 0
            ? { ts, shard: shardId, count: 1 }
            : { ts, shard: shardId, count: 1, key: keys[drawIndex(cumulative, draws.uniform())] },
        );
      }
    }
    // Array.prototype.sort is stable, so equal times keep their drawing order.
    return events.sort((left, right) => left.ts - right.ts);
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

function plantedEvent(plant: Plant, cycleStart: number): PlantedEvent {
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
  }
}
