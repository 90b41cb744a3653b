// The weighted placement of the share-sweep tests: 600 shards, weights
// 1 + ((37 i) mod 100) / 50 (a hundred distinct values, six shards each), shares w_i / sum w
// summed in order, N = 200000. test/chance/reference/make-sweep-sums-reference.py builds the
// same shares in the same order, so their doubles and every shard's threshold agree.
import { shareSweep, type ShareSweep } from '../../../src/chance/share-sweep/sorted-shares.js';

export const sweepTotal = 200_000;

export function sweepShares(): Float64Array {
  const weights = Array.from({ length: 600 }, (_, i) => 1 + ((37 * i) % 100) / 50);
  let total = 0;
  for (const weight of weights) total += weight;
  return Float64Array.from(weights, (weight) => weight / total);
}

export function referenceSweep(): ShareSweep {
  const sweep = shareSweep({ total: sweepTotal, shardCount: 600, shares: sweepShares() });
  if (sweep === null) throw new Error('600 shares up to 1e-2 are a sweep');
  return sweep;
}

/** |actual - expected| within `tolerance` of |expected|. */
export function relativeGap(actual: number, expected: number): number {
  return Math.abs(actual - expected) / Math.abs(expected);
}
