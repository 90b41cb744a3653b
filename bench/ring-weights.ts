import { RandomDraws } from '../src/scenario/random-draws.js';

/**
 * Demo shard maps for benches and tests: the hash-range sizes of a ring with `tokens`
 * random tokens per shard, each shard's range a sum of `tokens` exponential gaps, so
 * gamma(tokens) shares (coefficient of variation 1 / sqrt(tokens); common practice for
 * consistent hashing with virtual nodes). `draws` is a seed or a stream to go on drawing
 * from; the same seed gives the same map on every run. O(m tokens).
 */
export function ringWeights(m: number, draws: RandomDraws | number, tokens = 16): Float64Array {
  const stream = typeof draws === 'number' ? new RandomDraws(draws) : draws;
  const weights = new Float64Array(m);
  for (let i = 0; i < m; i++) {
    let w = 0;
    for (let t = 0; t < tokens; t++) w -= Math.log(1 - stream.uniform());
    weights[i] = w;
  }
  return weights;
}
