import { longestShardId } from './count-record.js';
import { UsageError } from '../errors/usage-error.js';
import { parseShardMap } from './shard-map.js';

/** {@link ShardUniverse.admit} result: the id is not in the declared universe. */
export const outsideUniverse = -1;
/** {@link ShardUniverse.admit} result: a growing universe is full. */
export const tooManyShards = -2;
/** Default of `--max-shards`: bounds memory against a flood of bogus ids. */
export const defaultMaxShards = 100_000;

/**
 * How a growing universe changed when ids retired (see {@link ShardUniverse.retire}): every
 * holder of state indexed like the universe moves entry `old` to `indexAfter[old]` and drops
 * it where that is -1. Survivors keep their order; indices only ever move down.
 */
export interface ShardRemap {
  /** The ids by index before the change (the universe's own array, no longer written). */
  readonly previousIds: readonly string[];
  /** New index of each previous index, -1 for a retired id. */
  readonly indexAfter: Int32Array;
  /** Number of shards after the change. */
  readonly size: number;
  /** Ids retired by this change. */
  readonly retired: number;
}

/** A declared universe as plain data (see {@link ShardUniverse.describe}). */
export interface DeclaredUniverse {
  readonly ids: readonly string[];
  /** Relative weights as declared (not normalised), or null for equal shares. */
  readonly weights: readonly number[] | null;
  readonly maxShards: number;
}

/** Settings shared by every way of building a universe. */
export interface UniverseOptions {
  /** `--max-shards`: the most shards a universe may hold (default 100000). */
  readonly maxShards?: number;
}

/**
 * The shards a window's counts are spread over: ids <-> dense indices 0..m-1
 * and the expected share p_i of each. A declared universe (a count, a range,
 * a list or a shard map) has a fixed size, so a shard that never reports is
 * still seen, as an empty shard. An undeclared one grows as ids arrive, with
 * equal shares, up to `maxShards`, and retires ids that stopped reporting
 * ({@link retire}, decided by shard-retirement.ts at window boundaries); the
 * cold and empty tests mean nothing there and the judge switches them off.
 */
export class ShardUniverse {
  /** True when the shard set was given up front, false when it grows. */
  readonly declared: boolean;
  /** The cap on the number of shards. */
  readonly maxShards: number;
  private idList: string[];
  private indexById: Map<string, number>;
  private readonly weights: readonly number[] | null;
  private sharesCache: Float64Array | null = null;

  private constructor(
    ids: readonly string[],
    weights: readonly number[] | null,
    declared: boolean,
    maxShards: number,
  ) {
    this.declared = declared;
    this.maxShards = maxShards;
    this.idList = [...ids];
    this.weights = weights;
    this.indexById = new Map(ids.map((id, index) => [id, index]));
  }

  /**
   * A declared universe of `count` equal shards with ids "0".."count-1".
   * O(count).
   */
  static ofCount(count: number, options: UniverseOptions = {}): ShardUniverse {
    const maxShards = checkMaxShards(options.maxShards);
    if (!Number.isSafeInteger(count) || count < 1) {
      throw new UsageError('--shards', String(count), 'is not a positive whole number');
    }
    if (count > maxShards) {
      throw new UsageError('--shards', String(count), `is more than --max-shards ${maxShards}`);
    }
    return new ShardUniverse(
      Array.from({ length: count }, (_, index) => String(index)),
      null,
      true,
      maxShards,
    );
  }

  /**
   * Reads the `--shards` option: a count (`64`, ids "0".."63"), a range with
   * a prefix (`s-0..s-63`; zero padding is kept, `node-001..node-128`) or a
   * comma-separated list (`a,b,c`). Equal shares. Throws a
   * {@link UsageError} naming the option and value. O(number of shards).
   */
  static fromShardsOption(value: string, options: UniverseOptions = {}): ShardUniverse {
    const maxShards = checkMaxShards(options.maxShards);
    const text = value.trim();
    if (/^\d+$/.test(text)) {
      const count = Number(text);
      if (count < 1) throw new UsageError('--shards', value, 'is not a positive whole number');
      if (count > maxShards) {
        throw new UsageError('--shards', value, `is more than --max-shards ${maxShards}`);
      }
      return ShardUniverse.ofCount(count, { maxShards });
    }
    if (text.includes(',')) {
      return ShardUniverse.fromIds(
        text.split(',').map((id) => id.trim()),
        { maxShards },
        '--shards',
        value,
      );
    }
    const range = /^(.*?)(\d+)\.\.(.*?)(\d+)$/.exec(text);
    if (range) {
      const ids = rangeIds(value, range, maxShards);
      checkIds(ids, maxShards, '--shards', value);
      return new ShardUniverse(ids, null, true, maxShards);
    }
    throw new UsageError(
      '--shards',
      value,
      'is not a shard count (64), a range (s-0..s-63) or a list (a,b,c)',
    );
  }

  /**
   * A declared universe from a shard map file's text (CSV `shard,weight` or
   * JSON `{"s-0": 1.0}`): shares are the weights over their sum. Errors name
   * the file and the bad entry. O(size of the file).
   */
  static fromShardMap(
    content: string,
    fileName: string,
    options: UniverseOptions = {},
  ): ShardUniverse {
    const maxShards = checkMaxShards(options.maxShards);
    const map = parseShardMap(content, fileName, maxShards);
    return new ShardUniverse(map.ids, map.weights, true, maxShards);
  }

  /**
   * A declared universe with equal shares from a list of ids.
   * `option`/`value` name where the list came from, for the error message.
   */
  static fromIds(
    ids: readonly string[],
    options: UniverseOptions = {},
    option = '--shards',
    value = ids.join(','),
  ): ShardUniverse {
    const maxShards = checkMaxShards(options.maxShards);
    checkIds(ids, maxShards, option, value);
    return new ShardUniverse(ids, null, true, maxShards);
  }

  /**
   * A declared universe with shares proportional to `weights` (relative
   * capacities, each finite and above zero), as built by a simulated cluster.
   */
  static fromWeights(
    ids: readonly string[],
    weights: readonly number[],
    options: UniverseOptions = {},
  ): ShardUniverse {
    const maxShards = checkMaxShards(options.maxShards);
    const value = ids.join(',');
    checkIds(ids, maxShards, '--shard-map', value);
    if (weights.length !== ids.length) {
      throw new UsageError(
        '--shard-map',
        value,
        `has ${ids.length} shards but ${weights.length} weights`,
      );
    }
    weights.forEach((weight, index) => {
      if (!Number.isFinite(weight) || weight <= 0) {
        throw new UsageError(
          '--shard-map',
          value,
          `gives shard "${ids[index]}" weight ${weight}, not above zero`,
        );
      }
    });
    return new ShardUniverse(ids, [...weights], true, maxShards);
  }

  /**
   * Grows a universe of numbered equal shards ("0".."m-1", as {@link ofCount} makes for a
   * topic's partitions) to `count` shards: a topic gained partitions. Existing indices keep
   * their ids; a count at or below the size changes nothing. O(added).
   */
  growNumbered(count: number): void {
    if (this.weights !== null || !this.declared) {
      throw new RangeError('only a declared universe of numbered equal shards grows by count');
    }
    if (count > this.maxShards) {
      throw new UsageError('--max-shards', String(this.maxShards), `is below ${count} partitions`);
    }
    for (let index = this.idList.length; index < count; index++) {
      const id = String(index);
      this.idList.push(id);
      this.indexById.set(id, index);
    }
  }

  /**
   * What rebuilds this universe in another thread (the judging worker, see
   * src/judge/threaded-judge.ts): a declared universe's ids, its exact weights and its cap.
   * A growing universe changes with every record, so it is judged on the reading thread and
   * has none. O(m).
   */
  describe(): DeclaredUniverse | null {
    if (!this.declared) return null;
    return {
      ids: [...this.idList],
      weights: this.weights === null ? null : [...this.weights],
      maxShards: this.maxShards,
    };
  }

  /** The universe {@link describe} described, equal to the original in ids and shares. */
  static fromDescription(description: DeclaredUniverse): ShardUniverse {
    const { ids, weights, maxShards } = description;
    return new ShardUniverse(ids, weights === null ? null : [...weights], true, maxShards);
  }

  /** An undeclared universe that grows as shards report, equal shares. */
  static growing(options: UniverseOptions = {}): ShardUniverse {
    return new ShardUniverse([], null, false, checkMaxShards(options.maxShards));
  }

  /**
   * Number of shards m (for a growing universe: those admitted and not retired, see
   * {@link retire}).
   */
  get size(): number {
    return this.idList.length;
  }

  /** Shard ids by index. */
  get ids(): readonly string[] {
    return this.idList;
  }

  /**
   * Expected shares p_1..p_m, summing to 1 (up to rounding). The array is
   * shared and must not be written; a growing universe makes a new one each
   * time its size has changed. O(m) after a change, O(1) otherwise.
   */
  get shares(): Float64Array {
    const size = this.idList.length;
    if (this.sharesCache?.length === size) return this.sharesCache;
    const shares = new Float64Array(size);
    if (this.weights === null) {
      shares.fill(1 / size);
    } else {
      let total = 0;
      for (const weight of this.weights) total += weight;
      for (let index = 0; index < size; index++) shares[index] = this.weights[index] / total;
    }
    this.sharesCache = shares;
    return shares;
  }

  /** The id at a dense index. */
  idAt(index: number): string {
    return this.idList[index];
  }

  /** Dense index of a shard id, or -1 ({@link outsideUniverse}) when unknown. O(1). */
  indexOf(id: string): number {
    return this.indexById.get(id) ?? outsideUniverse;
  }

  /**
   * The index to count a record under. A growing universe adds an unseen id
   * (returning {@link tooManyShards} once full); a declared one returns
   * {@link outsideUniverse} for an unknown id. O(1): the per-record lookup.
   */
  admit(id: string): number {
    const index = this.indexById.get(id);
    if (index !== undefined) return index;
    if (this.declared) return outsideUniverse;
    if (this.idList.length >= this.maxShards) {
      this.refusedWhileFull++;
      return tooManyShards;
    }
    // Ids decoded from a file may be slices of a large read buffer; a joined
    // copy keeps the universe from pinning that buffer for the whole run.
    const kept = Array.from(id).join('');
    const added = this.idList.length;
    this.idList.push(kept);
    this.indexById.set(kept, added);
    return added;
  }

  /** Ids refused by {@link admit} because the growing universe was full, since it was built. */
  get refusedFull(): number {
    return this.refusedWhileFull;
  }

  /** Ids retired since the universe was built. */
  get retiredTotal(): number {
    return this.retiredCount;
  }

  /**
   * Changes whenever ids retire, so a holder of ids by index (a recording) can tell that
   * the same size now means other ids.
   */
  get layout(): number {
    return this.layoutVersion;
  }

  /**
   * Calls `listener` synchronously whenever ids retire, before {@link retire} returns:
   * every holder of per-index state (a judge, key analysis) follows the remap there.
   * Returns the unsubscribe function.
   */
  onRetire(listener: (remap: ShardRemap) => void): () => void {
    this.retireListeners.push(listener);
    return () => {
      this.retireListeners = this.retireListeners.filter((kept) => kept !== listener);
    };
  }

  /**
   * Retires the ids of a growing universe for which `keep(index)` is false: the survivors
   * keep their order and take indices 0..size-1, the retired ids leave m, and their room
   * goes to ids that report later. Listeners learn the remap before this returns. Null when
   * nothing retires. O(m). Throws for a declared universe, whose shards are fixed.
   */
  retire(keep: (index: number) => boolean): ShardRemap | null {
    if (this.declared) throw new Error('a declared shard universe cannot retire shards');
    const previousIds = this.idList;
    const indexAfter = new Int32Array(previousIds.length);
    const survivors: string[] = [];
    for (let index = 0; index < previousIds.length; index++) {
      if (keep(index)) {
        indexAfter[index] = survivors.length;
        survivors.push(previousIds[index]);
      } else {
        indexAfter[index] = -1;
      }
    }
    const retired = previousIds.length - survivors.length;
    if (retired === 0) return null;
    // A fresh array, not the old one rewritten: readers that kept `ids` (a review window)
    // see the ids of their own window, and notice the change by identity.
    this.idList = survivors;
    this.indexById = new Map(survivors.map((id, index) => [id, index]));
    this.sharesCache = null;
    this.retiredCount += retired;
    this.layoutVersion++;
    const remap: ShardRemap = { previousIds, indexAfter, size: survivors.length, retired };
    for (const listener of this.retireListeners) listener(remap);
    return remap;
  }

  private refusedWhileFull = 0;
  private retiredCount = 0;
  private layoutVersion = 0;
  private retireListeners: ((remap: ShardRemap) => void)[] = [];
}

function checkMaxShards(maxShards: number | undefined): number {
  if (maxShards === undefined) return defaultMaxShards;
  if (!Number.isSafeInteger(maxShards) || maxShards < 1) {
    throw new UsageError('--max-shards', String(maxShards), 'is not a positive whole number');
  }
  return maxShards;
}

function checkIds(ids: readonly string[], maxShards: number, option: string, value: string): void {
  if (ids.length === 0) throw new UsageError(option, value, 'lists no shards');
  if (ids.length > maxShards) {
    throw new UsageError(
      option,
      value,
      `lists ${ids.length} shards, more than --max-shards ${maxShards}`,
    );
  }
  const seen = new Set<string>();
  for (const id of ids) {
    if (id === '') throw new UsageError(option, value, 'has an empty shard id');
    if (id.length > longestShardId) {
      throw new UsageError(
        option,
        value,
        `has a shard id longer than ${longestShardId} characters`,
      );
    }
    if (seen.has(id)) throw new UsageError(option, value, `lists shard "${id}" twice`);
    seen.add(id);
  }
}

function rangeIds(value: string, range: RegExpExecArray, maxShards: number): string[] {
  const [, firstPrefix, firstDigits, lastPrefix, lastDigits] = range;
  if (firstPrefix !== lastPrefix) {
    throw new UsageError(
      '--shards',
      value,
      `has different prefixes ${JSON.stringify(firstPrefix)} and ${JSON.stringify(lastPrefix)}`,
    );
  }
  if (firstDigits.length > 15 || lastDigits.length > 15) {
    throw new UsageError('--shards', value, 'has a shard number too large');
  }
  const padded = hasLeadingZero(firstDigits) || hasLeadingZero(lastDigits);
  if (padded && firstDigits.length !== lastDigits.length) {
    throw new UsageError(
      '--shards',
      value,
      'pads its ends to different widths; write both with the same number of digits',
    );
  }
  const first = Number(firstDigits);
  const last = Number(lastDigits);
  if (last < first) throw new UsageError('--shards', value, 'runs backwards');
  const count = last - first + 1;
  if (count > maxShards) {
    throw new UsageError(
      '--shards',
      value,
      `declares ${count} shards, more than --max-shards ${maxShards}`,
    );
  }
  const width = padded ? firstDigits.length : 0;
  return Array.from(
    { length: count },
    (_, offset) => firstPrefix + String(first + offset).padStart(width, '0'),
  );
}

function hasLeadingZero(digits: string): boolean {
  return digits.length > 1 && digits.startsWith('0');
}
