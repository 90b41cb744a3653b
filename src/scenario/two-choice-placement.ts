import { RandomDraws } from './random-draws.js';

/**
 * What-if for planning: the fullest shard when each request goes to the less loaded of two
 * shards drawn at random ("power of two choices"; Azar, Broder, Karlin and Upfal 1999,
 * "Balanced allocations", SIAM J. Computing 29, show the excess over N/m drops from about
 * log m / log log m to log log m / log 2). Estimated by seeded simulation.
 */
export interface TwoChoiceEstimate {
  /** Simulated windows. */
  readonly runs: number;
  /** Mean fullest-shard count over the runs, with a 95% normal confidence interval. */
  readonly meanMaximum: number;
  readonly meanInterval: readonly [number, number];
  /** Fraction of runs whose fullest shard exceeded the capacity, with a 95% Wilson interval. */
  readonly exceedProbability: number;
  readonly exceedInterval: readonly [number, number];
}

/**
 * Simulates `runs` windows of `requests` two-choice placements on `shards` equal shards.
 * O(runs * requests) time, O(shards) memory. Same seed, same answer.
 * Example: simulateTwoChoice(1000, 1000, 1e9, 50, 7).meanMaximum is about 3 to 4.
 */
export function simulateTwoChoice(
  shards: number,
  requests: number,
  capacity: number,
  runs: number,
  seed: number,
): TwoChoiceEstimate {
  const draws = new RandomDraws(seed);
  const load = new Uint32Array(shards);
  let sum = 0;
  let sumSquares = 0;
  let exceeded = 0;
  for (let run = 0; run < runs; run++) {
    load.fill(0);
    let max = 0;
    for (let i = 0; i < requests; i++) {
      const a = Math.floor(draws.uniform() * shards);
      const b = Math.floor(draws.uniform() * shards);
      const pick = load[a] <= load[b] ? a : b;
      const value = ++load[pick];
      if (value > max) max = value;
    }
    sum += max;
    sumSquares += max * max;
    if (max > capacity) exceeded++;
  }
  const mean = sum / runs;
  const variance = runs > 1 ? Math.max(0, (sumSquares - runs * mean * mean) / (runs - 1)) : 0;
  const half = 1.96 * Math.sqrt(variance / runs);
  return {
    runs,
    meanMaximum: mean,
    meanInterval: [mean - half, mean + half],
    exceedProbability: exceeded / runs,
    exceedInterval: wilsonInterval(exceeded, runs),
  };
}

/** 95% Wilson score interval for a binomial proportion (Wilson 1927, JASA 22). */
export function wilsonInterval(
  successes: number,
  trials: number,
  z = 1.959963984540054,
): [number, number] {
  if (trials === 0) return [0, 1];
  const p = successes / trials;
  const denominator = 1 + (z * z) / trials;
  const centre = (p + (z * z) / (2 * trials)) / denominator;
  const half =
    (z * Math.sqrt((p * (1 - p)) / trials + (z * z) / (4 * trials * trials))) / denominator;
  return [Math.max(0, centre - half), Math.min(1, centre + half)];
}
