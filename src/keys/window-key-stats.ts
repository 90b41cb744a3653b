import { DistinctKeys } from './distinct-keys.js';
import { combinedHash, hashKey, type KeyHashes } from './key-hash.js';
import { keptKey } from './key-text.js';
import { SpaceSaving } from './space-saving.js';

/** How much each shard of a window keeps about its keys (`--key-counters`, `--key-registers`). */
export interface KeySketchSettings {
  /** Space-Saving counters per shard and window. */
  readonly counters: number;
  /** HyperLogLog registers per shard and window (a power of two, 16..65536). */
  readonly registers: number;
}

export const defaultKeySketchSettings: KeySketchSettings = { counters: 16, registers: 4096 };

/** One shard's keys in one window. */
export interface ShardKeyStats {
  /** Requests with a key. */
  requests: number;
  readonly heavy: SpaceSaving;
  readonly distinct: DistinctKeys;
}

/**
 * Bytes one shard's key statistics can take in one window, an upper bound: the counters
 * (each a key of at most 128 UTF-16 code units, 256 bytes, plus about 64 bytes of map entry
 * and numbers) and the distinct count (at most `registers` bytes), plus 200 bytes of
 * object headers. Whatever the number of distinct keys.
 *
 * @example shardKeyMemoryBound(defaultKeySketchSettings) // 9416
 */
export function shardKeyMemoryBound(settings: KeySketchSettings): number {
  return settings.counters * (256 + 64) + settings.registers + 200;
}

/**
 * The keys of one window, per shard: heavy hitters (Space-Saving) and distinct keys
 * (exact, then HyperLogLog), allocated when a shard's first keyed request arrives. Memory
 * at most {@link shardKeyMemoryBound} per shard that saw a key. Cost per request: one hash
 * of the key, one Space-Saving update, one distinct-count update.
 */
export class WindowKeyStats {
  readonly settings: KeySketchSettings;
  /** Indexed like the universe; undefined where no keyed request arrived. */
  readonly shards: (ShardKeyStats | undefined)[] = [];
  /** Requests with a key, all shards. */
  requests = 0;

  constructor(settings: KeySketchSettings) {
    this.settings = settings;
  }

  /** Counts `count` requests for `key` on shard `index`. */
  add(index: number, key: string, count: number, hashes: KeyHashes): void {
    let shard = this.shards[index];
    if (shard === undefined) {
      shard = {
        requests: 0,
        heavy: new SpaceSaving(this.settings.counters),
        distinct: new DistinctKeys({ registers: this.settings.registers }),
      };
      while (this.shards.length < index) this.shards.push(undefined);
      this.shards[index] = shard;
    }
    hashKey(key, hashes);
    shard.requests += count;
    this.requests += count;
    shard.heavy.add(keptKey(key, hashes.second), count);
    shard.distinct.add(combinedHash(hashes));
  }

  /**
   * Follows a retirement of a growing universe: each shard's statistics move to its new
   * index (`indexAfter[old]`), a retired shard's are dropped. O(shards).
   */
  follow(indexAfter: Int32Array): void {
    const moved: (ShardKeyStats | undefined)[] = [];
    this.shards.forEach((shard, index) => {
      const at = index < indexAfter.length ? indexAfter[index] : -1;
      if (shard === undefined || at < 0) return;
      while (moved.length < at) moved.push(undefined);
      moved[at] = shard;
    });
    this.shards.length = moved.length;
    for (let index = 0; index < moved.length; index++) this.shards[index] = moved[index];
  }
}
