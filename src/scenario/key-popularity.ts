/**
 * Zipf popularity over `keyCount` keys: key of rank r (1-based) is requested
 * with probability proportional to r^-exponent (Zipf's law, as commonly used
 * to model cache and web request popularity, e.g. Breslau et al., "Web
 * caching and Zipf-like distributions", INFOCOM 1999). Returns the
 * probabilities by rank, summing to 1. O(keyCount).
 */
export function zipfProbabilities(keyCount: number, exponent: number): Float64Array {
  const probabilities = new Float64Array(keyCount);
  let total = 0;
  for (let rank = 1; rank <= keyCount; rank++) {
    probabilities[rank - 1] = rank ** -exponent;
    total += probabilities[rank - 1];
  }
  for (let index = 0; index < keyCount; index++) probabilities[index] /= total;
  return probabilities;
}

/**
 * The shard a key lands on: FNV-1a (32-bit, Fowler, Noll and Vo) of the key's
 * UTF-16 code units, modulo the shard count; the plain hash-mod placement
 * that random placement models. O(key length).
 */
export function shardOfKey(key: string, shardCount: number): number {
  let hash = 0x811c9dc5 | 0;
  for (let at = 0; at < key.length; at++) hash = Math.imul(hash ^ key.charCodeAt(at), 0x01000193);
  return (hash >>> 0) % shardCount;
}

/** The keys hashed to one shard and the cumulative probability of each, for drawing a key given the shard. */
export interface ShardKeys {
  readonly keys: readonly string[];
  /** cumulative[i] = probability of keys[0..i] given this shard; the last is 1 (or the array is empty). */
  readonly cumulative: Float64Array;
}

/** Keys grouped by shard, and each shard's share of all requests (the key-implied shares). */
export interface KeyPlacement {
  readonly byShard: readonly ShardKeys[];
  readonly shares: Float64Array;
}

/**
 * A biased partitioner: `keyFactor` times the fair share of the key space goes to shard
 * `biased`, the rest by {@link shardOfKey}. A second FNV-1a hash (of `bias:` + key)
 * decides which keys are diverted: the fraction (keyFactor - 1) / (m - 1) of them, so that
 * the biased shard holds keyFactor / m of all keys. O(key length).
 */
export function biasedShardOfKey(
  key: string,
  shardCount: number,
  biased: number,
  keyFactor: number,
): number {
  const diverted = (keyFactor - 1) / (shardCount - 1);
  if (shardOfKey(`bias:${key}`, 1_000_000) < diverted * 1_000_000) return biased;
  return shardOfKey(key, shardCount);
}

/**
 * Places keys named `prefix + rank` with the given probabilities on
 * `shardCount` shards by {@link shardOfKey} (or the given partitioner). A
 * shard's share is the summed popularity of its keys: a few hot keys make
 * their shards hot with perfect hashing. O(keys).
 */
export function placeKeys(
  prefix: string,
  probabilities: Float64Array,
  shardCount: number,
  partition: (key: string) => number = (key) => shardOfKey(key, shardCount),
): KeyPlacement {
  const keys: string[][] = Array.from({ length: shardCount }, () => []);
  const weights: number[][] = Array.from({ length: shardCount }, () => []);
  const shares = new Float64Array(shardCount);
  probabilities.forEach((probability, index) => {
    const key = `${prefix}${index + 1}`;
    const shard = partition(key);
    keys[shard].push(key);
    weights[shard].push(probability);
    shares[shard] += probability;
  });
  const byShard = keys.map((shardKeys, shard) => {
    const cumulative = new Float64Array(shardKeys.length);
    let sum = 0;
    weights[shard].forEach((weight, index) => {
      sum += weight;
      cumulative[index] = sum / shares[shard];
    });
    if (cumulative.length > 0) cumulative[cumulative.length - 1] = 1;
    return { keys: shardKeys, cumulative };
  });
  return { byShard, shares };
}

/** The first index whose cumulative probability exceeds u (binary search, O(log n)). */
export function drawIndex(cumulative: Float64Array, u: number): number {
  let low = 0;
  let high = cumulative.length - 1;
  while (low < high) {
    const middle = (low + high) >>> 1;
    if (cumulative[middle] > u) high = middle;
    else low = middle + 1;
  }
  return low;
}
