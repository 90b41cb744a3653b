/**
 * Something planted in a simulated cluster: the ground truth a verdict is
 * checked against. Times are offsets in ms from the scenario start (within
 * each cycle, for a cycling scenario).
 */
export type Plant =
  | {
      /** The shard takes `factor` times its fair share while the plant is at full strength. */
      readonly kind: 'hotspot';
      readonly shard: string;
      readonly factor: number;
      /** When the hotspot starts to rise. */
      readonly atMs: number;
      /** Linear rise to full strength (0: appears at once). */
      readonly riseMs: number;
      /** Time at full strength. */
      readonly holdMs: number;
      /** Linear fade back to the fair share (0: vanishes at once). */
      readonly fadeMs: number;
    }
  | {
      /**
       * The shard serves nothing. Its traffic moves to `failoverTo` (one
       * neighbour takes it all: the failover pattern) or, without it, spreads
       * over the other shards in proportion to their shares.
       */
      readonly kind: 'dead';
      readonly shard: string;
      readonly atMs: number;
      readonly forMs: number;
      readonly failoverTo?: string;
    }
  | {
      /** Total traffic is multiplied by `factor` (below 1: a lull, too little traffic to judge). */
      readonly kind: 'lull';
      readonly factor: number;
      readonly atMs: number;
      readonly forMs: number;
    }
  | {
      /**
       * One key takes `share` of all traffic (the rest shrinks in proportion): a presale
       * code every client asks for at once. Only for request events; the key lands on the
       * shard the partitioner gives it.
       */
      readonly kind: 'hot key';
      readonly key: string;
      readonly share: number;
      readonly atMs: number;
      readonly forMs: number;
    }
  | {
      /**
       * The partitioner sends `keyFactor` times its fair share of the key space to
       * `shard` (a bad deploy of the hash function or the shard map): every key keeps its
       * popularity, but too many keys land on one shard. Only for request events.
       */
      readonly kind: 'biased partitioner';
      readonly shard: string;
      readonly keyFactor: number;
      readonly atMs: number;
      readonly forMs: number;
    }
  | {
      /**
       * Every share wobbles: shard i's share is multiplied by
       * 1 + amplitude * sin(2 pi * 3i / m), then renormalised. Broad
       * unevenness with no single shard standing out (a bad rebalance).
       */
      readonly kind: 'uneven';
      readonly amplitude: number;
      readonly atMs: number;
      readonly forMs: number;
    };

/** How traffic reaches the wire. */
export type TrafficShape =
  | {
      /** One count report per shard per tick (a reporter's delta). */
      readonly kind: 'count reports';
    }
  | {
      /**
       * One request event per request, with a key. Keys `keyPrefix + rank`
       * have Zipf popularity and are hashed to shards, so shard shares are
       * the keys' summed popularity. A dead shard's keys go to its
       * `failoverTo` neighbour, or each to another live shard by a second hash.
       */
      readonly kind: 'request events';
      readonly keyCount: number;
      readonly zipfExponent: number;
      readonly keyPrefix: string;
    };

/** Shard shares: equal, explicit relative weights, or a seeded consistent-hash ring. */
export type ShareLayout =
  | { readonly kind: 'equal' }
  | { readonly kind: 'weights'; readonly weights: readonly number[] }
  | { readonly kind: 'ring'; readonly tokensPerShard: number };

/** A simulated cluster and its traffic. */
export interface ScenarioDefinition {
  readonly name: string;
  /** One line for `--help` and the screen's header. */
  readonly summary: string;
  readonly shardIds: readonly string[];
  /** The declared shares (what the operator knows, and what the shard map says). */
  readonly shares: ShareLayout;
  /** Mean total requests per second, before the diurnal swing and lulls. */
  readonly requestsPerSecond: number;
  /** Reporting interval: count reports are one per shard per tick, stamped at the tick's start. */
  readonly tickMs: number;
  readonly traffic: TrafficShape;
  /** Rate multiplied by 1 + amplitude * sin(2 pi t / period), t from the start. */
  readonly diurnal?: { readonly amplitude: number; readonly periodMs: number };
  readonly plants: readonly Plant[];
  /** The plants repeat with this period (a demo that keeps showing things); absent: once. */
  readonly cycleMs?: number;
  /** A run long enough to see every plant come and go. */
  readonly suggestedDurationMs: number;
}

/**
 * Checks a definition's internal consistency: shards named by plants exist,
 * factors keep shares below 1, times are sensible. Throws a RangeError naming
 * the scenario and the problem (a programming error in a definition, not a
 * user's mistake). O(m + plants).
 */
export function checkDefinition(definition: ScenarioDefinition): void {
  const fail = (problem: string): never => {
    throw new RangeError(`scenario ${JSON.stringify(definition.name)}: ${problem}`);
  };
  const shardCount = definition.shardIds.length;
  if (shardCount === 0) fail('has no shards');
  if (new Set(definition.shardIds).size !== shardCount) fail('repeats a shard id');
  if (!(definition.requestsPerSecond > 0)) fail('needs a request rate above zero');
  if (!Number.isSafeInteger(definition.tickMs) || definition.tickMs <= 0)
    fail('needs a whole tick in ms');
  if (definition.shares.kind === 'weights') {
    if (definition.shares.weights.length !== shardCount)
      fail('has a weight count unlike its shard count');
    if (definition.shares.weights.some((weight) => !(weight > 0) || !Number.isFinite(weight))) {
      fail('has a weight that is not above zero');
    }
  }
  if (definition.shares.kind === 'ring' && !(definition.shares.tokensPerShard >= 1)) {
    fail('needs at least one ring token per shard');
  }
  if (definition.diurnal !== undefined) {
    const { amplitude, periodMs } = definition.diurnal;
    if (!(amplitude >= 0 && amplitude < 1) || !(periodMs > 0))
      fail('has a diurnal swing outside [0, 1)');
  }
  if (definition.plants.filter((plant) => plant.kind === 'biased partitioner').length > 1) {
    fail('has more than one biased partitioner');
  }
  for (const plant of definition.plants) {
    if (plant.atMs < 0) fail(`starts a ${plant.kind} plant before the scenario`);
    if (
      (plant.kind === 'hotspot' || plant.kind === 'dead' || plant.kind === 'biased partitioner') &&
      !definition.shardIds.includes(plant.shard)
    ) {
      fail(`plants a ${plant.kind} on unknown shard ${plant.shard}`);
    }
    if (plant.kind === 'dead' && plant.failoverTo !== undefined) {
      if (!definition.shardIds.includes(plant.failoverTo) || plant.failoverTo === plant.shard) {
        fail(`fails ${plant.shard} over to ${plant.failoverTo}, not another shard`);
      }
    }
    if (plant.kind === 'hotspot' && !(plant.factor > 0))
      fail('has a hotspot factor not above zero');
    if (plant.kind === 'lull' && !(plant.factor >= 0)) fail('has a negative lull factor');
    if (
      (plant.kind === 'hot key' || plant.kind === 'biased partitioner') &&
      definition.traffic.kind !== 'request events'
    ) {
      fail(`has a ${plant.kind} plant without request events`);
    }
    if (plant.kind === 'hot key' && !(plant.share > 0 && plant.share < 1)) {
      fail('has a hot key share outside (0, 1)');
    }
    if (
      plant.kind === 'biased partitioner' &&
      !(plant.keyFactor >= 1 && plant.keyFactor <= shardCount)
    ) {
      fail('has a partitioner key factor outside [1, shards]');
    }
    if (plant.kind === 'uneven' && !(plant.amplitude >= 0 && plant.amplitude < 1)) {
      fail('has an uneven amplitude outside [0, 1)');
    }
    if (definition.cycleMs !== undefined && plantEndMs(plant) > definition.cycleMs) {
      fail(`has a ${plant.kind} plant that outlasts its cycle`);
    }
  }
}

/** Offset at which a plant has fully ended. */
export function plantEndMs(plant: Plant): number {
  return plant.kind === 'hotspot'
    ? plant.atMs + plant.riseMs + plant.holdMs + plant.fadeMs
    : plant.atMs + plant.forMs;
}

/**
 * Strength of a plant at an offset: 0 before and after, 1 at full strength,
 * linear in between for a hotspot's rise and fade. O(1).
 */
export function plantStrength(plant: Plant, offsetMs: number): number {
  if (offsetMs < plant.atMs || offsetMs >= plantEndMs(plant)) return 0;
  if (plant.kind !== 'hotspot') return 1;
  const intoPlant = offsetMs - plant.atMs;
  if (intoPlant < plant.riseMs) return intoPlant / plant.riseMs;
  const intoFade = intoPlant - plant.riseMs - plant.holdMs;
  return intoFade <= 0 ? 1 : 1 - intoFade / plant.fadeMs;
}

/**
 * The expected share of every shard at an offset into the scenario, given
 * the shares with no plant active (`baseShares`): uneven wobble first, then
 * hotspots (the shard's share becomes factor x its base share, the others
 * shrink in proportion), then dead shards (share 0; the loss goes to the
 * failover neighbour, or to all others in proportion). Writes into `out`,
 * which sums to 1 unless every shard is dead. O(m) per active plant.
 */
export function sharesAt(
  definition: ScenarioDefinition,
  baseShares: Float64Array,
  indexOf: ReadonlyMap<string, number>,
  offsetMs: number,
  out: Float64Array,
): Float64Array {
  out.set(baseShares);
  const shardCount = out.length;
  const cycleOffset = definition.cycleMs === undefined ? offsetMs : offsetMs % definition.cycleMs;
  for (const plant of definition.plants) {
    if (plant.kind !== 'uneven') continue;
    const strength = plantStrength(plant, cycleOffset);
    if (strength === 0) continue;
    for (let shard = 0; shard < shardCount; shard++) {
      out[shard] *=
        1 + strength * plant.amplitude * Math.sin((2 * Math.PI * 3 * shard) / shardCount);
    }
    normalise(out);
  }
  for (const plant of definition.plants) {
    if (plant.kind !== 'hotspot') continue;
    const strength = plantStrength(plant, cycleOffset);
    if (strength === 0) continue;
    const hot = indexOf.get(plant.shard) as number;
    const factor = 1 + strength * (plant.factor - 1);
    const target = Math.min(1, factor * baseShares[hot]);
    const rest = 1 - out[hot];
    const scale = rest > 0 ? (1 - target) / rest : 0;
    for (let shard = 0; shard < shardCount; shard++) out[shard] *= scale;
    out[hot] = target;
  }
  for (const plant of definition.plants) {
    if (plant.kind !== 'dead' || plantStrength(plant, cycleOffset) === 0) continue;
    const dead = indexOf.get(plant.shard) as number;
    const lost = out[dead];
    out[dead] = 0;
    if (plant.failoverTo !== undefined) {
      out[indexOf.get(plant.failoverTo) as number] += lost;
    } else {
      normalise(out);
    }
  }
  return out;
}

/** Total requests per second at an offset: the base rate with the diurnal swing and any lull. O(plants). */
export function rateAt(definition: ScenarioDefinition, offsetMs: number): number {
  let rate = definition.requestsPerSecond;
  if (definition.diurnal !== undefined) {
    const { amplitude, periodMs } = definition.diurnal;
    rate *= 1 + amplitude * Math.sin((2 * Math.PI * offsetMs) / periodMs);
  }
  const cycleOffset = definition.cycleMs === undefined ? offsetMs : offsetMs % definition.cycleMs;
  for (const plant of definition.plants) {
    if (plant.kind === 'lull' && plantStrength(plant, cycleOffset) > 0) rate *= plant.factor;
  }
  return rate;
}

function normalise(values: Float64Array): void {
  let total = 0;
  for (const value of values) total += value;
  if (total > 0) for (let index = 0; index < values.length; index++) values[index] /= total;
}
