import { mean as sampleMean, sampleVariance } from 'simple-statistics';
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
 * O(runs * requests) time, O(shards + runs) memory. Same seed, same answer. The mean and
 * sample variance of the maxima are simple-statistics' mean and sampleVariance (two passes,
 * no cancellation); the interval is the normal one, mean +- 1.96 sd / sqrt(runs).
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
  const maxima = new Array<number>(runs);
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
    maxima[run] = max;
    if (max > capacity) exceeded++;
  }
  const mean = runs > 0 ? sampleMean(maxima) : Number.NaN;
  const variance = runs > 1 ? sampleVariance(maxima) : 0;
  const half = 1.96 * Math.sqrt(variance / runs);
  return {
    runs,
    meanMaximum: mean,
    meanInterval: [mean - half, mean + half],
    exceedProbability: exceeded / runs,
    exceedInterval: wilsonInterval(exceeded, runs),
  };
}

/**
 * 95% Wilson score interval for a binomial proportion (Wilson 1927, JASA 22). Written here:
 * simple-statistics has no interval for a proportion.
 */
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
