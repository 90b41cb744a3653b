import type { RandomDraws } from './random-draws.js';

/**
 * Shard shares of a consistent-hash ring: every shard places
 * `tokensPerShard` tokens at uniform random points of a ring of
 * circumference 1, and each token owns the arc back to the previous token,
 * as in Karger et al., "Consistent hashing and random trees" (STOC 1997).
 * A shard's share then has a coefficient of variation of about
 * 1/sqrt(tokensPerShard) (docs/model.md, "Shares are rarely equal"). The shares
 * sum to 1. O(m v log(m v)) for m shards and v tokens each.
 */
export function ringShares(
  shardCount: number,
  tokensPerShard: number,
  draws: RandomDraws,
): Float64Array {
  const tokenCount = shardCount * tokensPerShard;
  const points = new Float64Array(tokenCount);
  const owners = new Int32Array(tokenCount);
  for (let token = 0; token < tokenCount; token++) points[token] = draws.uniform();
  const order = Array.from({ length: tokenCount }, (_, token) => token).sort(
    (left, right) => points[left] - points[right] || left - right,
  );
  order.forEach((token, rank) => {
    owners[rank] = token % shardCount;
  });
  const shares = new Float64Array(shardCount);
  for (let rank = 0; rank < tokenCount; rank++) {
    const point = points[order[rank]];
    const previous = rank === 0 ? points[order[tokenCount - 1]] - 1 : points[order[rank - 1]];
    shares[owners[rank]] += point - previous;
  }
  return shares;
}
