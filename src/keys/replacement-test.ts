import { RandomDraws } from '../scenario/random-draws.js';
import { wilsonInterval } from '../scenario/two-choice-placement.js';

/** What the re-placement test is given: the window's key weights and the observed loads. */
export interface ReplacementInput {
  /** Requests of each heavy key (Space-Saving counts, less their overestimates). */
  readonly heavy: Float64Array;
  /** Requests not in a heavy key. */
  readonly lightRequests: number;
  /** Keys not among the heavy ones, each taken to carry lightRequests / lightKeys. */
  readonly lightKeys: number;
  /** Shares of the m shards (null: equal). */
  readonly shares: Float64Array | null;
  readonly shardCount: number;
  /** Observed fullest relative load of the keyed requests, max_i x_i / (N p_i). */
  readonly observed: number;
  /** At most this many simulations. */
  readonly maxSimulations: number;
  /** At most this much work: key placements summed over the simulations. */
  readonly maxWork: number;
  readonly seed: number;
}

export interface ReplacementResult {
  /** Monte Carlo p-value (exceeded + 1) / (simulations + 1) (North, Curtis and Sham 2002). */
  readonly p: number;
  /** 95% Wilson score interval for P(fullest >= observed) (Wilson 1927). */
  readonly low: number;
  readonly high: number;
  readonly confidence: 0.95;
  readonly simulations: number;
  /** Simulations whose fullest shard reached the observed load. */
  readonly exceeded: number;
  readonly seed: number;
}

/**
 * Re-placement test: how likely is the observed fullest-shard load if these keys, with
 * these weights, had been placed on the shards at random? Each simulation puts every heavy
 * key on a shard drawn by the shares, and the light keys (all of one weight, lightRequests
 * / lightKeys) as a Multinomial(lightKeys, shares) draw, then takes the fullest relative
 * load max_i load_i / (N p_i). The multinomial draw is Poisson counts corrected to the
 * exact total by adding or removing placements uniformly at random, both exact (a standard
 * property of independent Poisson counts; the removals through a Fenwick tree, P. M.
 * Fenwick 1994).
 *
 * Seeded (the pure-rand Mersenne Twister of RandomDraws), so a window always gets the same
 * answer. Bounded in time: at most `maxSimulations` simulations and at most `maxWork` key
 * placements in all (the number of simulations is cut to fit). The p-value is the add-one Monte Carlo estimate (B. V. North, D.
 * Curtis and P. C. Sham, "A note on the calculation of empirical P values from Monte Carlo
 * procedures", AJHG 71, 2002), never 0; beside it a 95% Wilson interval.
 *
 * @example replacementTest({heavy: Float64Array.of(500), lightRequests: 500, lightKeys: 500, ...})
 */
export function replacementTest(input: ReplacementInput): ReplacementResult {
  const m = input.shardCount;
  const heavyCount = input.heavy.length;
  let total = input.lightRequests;
  for (let at = 0; at < heavyCount; at++) total += input.heavy[at];
  const perSimulation = heavyCount + 2 * m + Math.ceil(Math.sqrt(input.lightKeys)) * 4 + 1;
  const simulations = Math.max(
    1,
    Math.min(input.maxSimulations, Math.floor(input.maxWork / perSimulation)),
  );
  const draws = new RandomDraws(input.seed >>> 0);
  const cumulative = cumulativeShares(input.shares, m);
  const loads = new Float64Array(m);
  const light = new Float64Array(m);
  const tree = new Float64Array(m + 1);
  const lightWeight = input.lightKeys > 0 ? input.lightRequests / input.lightKeys : 0;
  const threshold = input.observed * (1 - 1e-9);
  let exceeded = 0;
  for (let run = 0; run < simulations; run++) {
    loads.fill(0);
    for (let at = 0; at < heavyCount; at++) {
      loads[pickShard(draws, cumulative, m)] += input.heavy[at];
    }
    if (input.lightKeys > 0) {
      multinomial(draws, input.lightKeys, input.shares, cumulative, light, tree);
      for (let shard = 0; shard < m; shard++) loads[shard] += light[shard] * lightWeight;
    }
    let fullest = 0;
    for (let shard = 0; shard < m; shard++) {
      const share = input.shares === null ? 1 / m : input.shares[shard];
      if (share > 0) fullest = Math.max(fullest, loads[shard] / (total * share));
    }
    if (fullest >= threshold) exceeded++;
  }
  const [low, high] = wilsonInterval(exceeded, simulations);
  return {
    p: (exceeded + 1) / (simulations + 1),
    low,
    high,
    confidence: 0.95,
    simulations,
    exceeded,
    seed: input.seed >>> 0,
  };
}

function cumulativeShares(shares: Float64Array | null, m: number): Float64Array | null {
  if (shares === null) return null;
  const cumulative = new Float64Array(m);
  let sum = 0;
  for (let shard = 0; shard < m; shard++) {
    sum += shares[shard];
    cumulative[shard] = sum;
  }
  cumulative[m - 1] = Infinity;
  return cumulative;
}

function pickShard(draws: RandomDraws, cumulative: Float64Array | null, m: number): number {
  if (cumulative === null) return Math.floor(draws.uniform() * m);
  const u = draws.uniform();
  let low = 0;
  let high = m - 1;
  while (low < high) {
    const middle = (low + high) >>> 1;
    if (cumulative[middle] > u) high = middle;
    else low = middle + 1;
  }
  return low;
}

/** Multinomial(keys, shares) into `out`: Poisson counts, then the total corrected exactly. */
function multinomial(
  draws: RandomDraws,
  keys: number,
  shares: Float64Array | null,
  cumulative: Float64Array | null,
  out: Float64Array,
  tree: Float64Array,
): void {
  const m = out.length;
  let drawn = 0;
  for (let shard = 0; shard < m; shard++) {
    out[shard] = draws.poisson(keys * (shares === null ? 1 / m : shares[shard]));
    drawn += out[shard];
  }
  for (; drawn < keys; drawn++) out[pickShard(draws, cumulative, m)]++;
  if (drawn === keys) return;
  // Remove drawn - keys placements uniformly without replacement: the r-th placement's
  // shard is found in a Fenwick tree of the counts.
  tree.fill(0);
  for (let index = 1; index <= m; index++) {
    tree[index] += out[index - 1];
    const parent = index + (index & -index);
    if (parent <= m) tree[parent] += tree[index];
  }
  let highBit = 1;
  while (highBit * 2 <= m) highBit *= 2;
  for (let left = drawn; left > keys; left--) {
    let rank = Math.floor(draws.uniform() * left);
    let at = 0;
    for (let step = highBit; step > 0; step >>= 1) {
      const next = at + step;
      if (next <= m && tree[next] <= rank) {
        at = next;
        rank -= tree[next];
      }
    }
    out[at]--;
    for (let index = at + 1; index <= m; index += index & -index) tree[index]--;
  }
}
