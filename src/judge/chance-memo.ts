import { ChanceCache } from '../chance/chance-cache.js';
import { emptyShardMoments, emptyShardsTail } from '../chance/empty-shards.js';
import type { TailProbability } from '../chance/extreme-load.js';
import type { Placement } from '../chance/placement.js';
import {
  emptiestQuantile,
  emptiestTail,
  fullestQuantile,
  fullestTail,
} from '../chance/shard-extremes.js';
import { warmCeiling, warmFloor } from './warm-quantiles.js';

/**
 * The chance engine's answers for a window, remembered across windows. With equal or fixed
 * shares a tail depends only on (total, threshold) and a quantile only on the total, and a
 * steady stream keeps asking the same questions (replays, fixed-rate reporters, the
 * calibration runs), while one tail near the median can cost milliseconds. Answers are
 * exactly the engine's; only repeats are saved. Bounded: the oldest entries go first once
 * `capacity` is reached (a learned baseline, whose shares change every window, only cycles
 * through it). Keys carry the shares' version, so new shares never hit old answers, and
 * judges of the same universe may share one memo.
 *
 * It also owns the engine's work products (`cache`, a ChanceCache: share classes, share
 * sweeps and their tables per shares vector, FFT twiddle tables per size) and hands it to
 * every question, so that what a window's questions build serves the next window on the
 * same shares, and goes when the shares do. And it numbers the universes its judges
 * declare shares for (universeKey), the part of the version that tells them apart.
 */
export class ChanceMemo {
  /** The chance engine's kept work, passed to every question this memo asks. */
  readonly cache: ChanceCache;
  private readonly entries = new Map<string, unknown>();
  /** The last ceiling and floor per shares and alpha, in counts, as search guesses. */
  private readonly lastLevels = new Map<string, { fair: number; count: number }>();
  /** Ceilings and floors answered from the ladders without a tail (for benches and tests). */
  ladderAnswers = 0;
  /** Ceilings and floors found so far per shares and alpha, by total (see QuantileLadder). */
  private readonly ladders = new Map<string, QuantileLadder>();
  private readonly capacity: number;
  /** Numbers of the universes asked about (universeKey); a universe's entry goes with it. */
  private readonly universes = new WeakMap<object, number>();
  private nextUniverse = 0;

  /**
   * @param capacity most answers kept (default 4096)
   * @param cache the engine's kept work (default: a new one of this memo's own)
   */
  constructor(capacity = 4096, cache: ChanceCache = new ChanceCache()) {
    this.capacity = capacity;
    this.cache = cache;
  }

  /**
   * A number for this universe, the same for every judge sharing this memo, so that their
   * declared shares share memo keys (and one judge's never meet another universe's). O(1).
   */
  universeKey(universe: object): number {
    let key = this.universes.get(universe);
    if (key === undefined) {
      key = this.nextUniverse++;
      this.universes.set(universe, key);
    }
    return key;
  }

  /** P(max r >= relative), fullestTail. */
  fullestTail(placement: Placement, version: string, relative: number): TailProbability {
    return this.remember(`F${version}|${placement.total}|${relative}`, () =>
      fullestTail(placement, relative, { cache: this.cache }),
    );
  }

  /** P(min r <= relative), emptiestTail. */
  emptiestTail(placement: Placement, version: string, relative: number): TailProbability {
    return this.remember(`E${version}|${placement.total}|${relative}`, () =>
      emptiestTail(placement, relative, { cache: this.cache }),
    );
  }

  /**
   * The chance ceiling at `alpha`: fullestQuantile(placement, 1 - alpha). For equal shares
   * the search starts from the last ceiling asked for (see warm-quantiles.ts).
   */
  ceiling(placement: Placement, version: string, alpha: number): number {
    return this.remember(`C${version}|${placement.total}|${alpha}`, () => {
      if (placement.shares === null && placement.total > 0) {
        return this.warm(`C${version}|${alpha}`, placement, (guess) =>
          warmCeiling(placement, alpha, guess, this.cache),
        );
      }
      return fullestQuantile(placement, 1 - alpha, this.cache);
    });
  }

  /** The chance floor at `alpha`: emptiestQuantile(placement, alpha), warm-started likewise. */
  floor(placement: Placement, version: string, alpha: number): number {
    return this.remember(`L${version}|${placement.total}|${alpha}`, () => {
      if (placement.shares === null && placement.total > 0) {
        return this.warm(`L${version}|${alpha}`, placement, (guess) =>
          warmFloor(placement, alpha, guess, this.cache),
        );
      }
      return emptiestQuantile(placement, alpha, this.cache);
    });
  }

  /** P(at least `observed` empty shards), emptyShardsTail. */
  emptyTail(placement: Placement, version: string, observed: number): { logProbability: number } {
    return this.remember(`Z${version}|${placement.total}|${observed}`, () =>
      emptyShardsTail(placement, observed, this.cache),
    );
  }

  /** Mean of the empty-shard count, emptyShardMoments. */
  emptyMean(placement: Placement, version: string): number {
    return this.remember(
      `M${version}|${placement.total}`,
      () => emptyShardMoments(placement, this.cache).mean,
    );
  }

  /**
   * Runs a warm-started search with a guess from the last answer under `key`: that count
   * moved by the change in fair share. Keeps the new answer as the next guess.
   */
  private warm(key: string, placement: Placement, search: (guess: number) => number): number {
    const fair = placement.total / placement.shardCount;
    let ladder = this.ladders.get(key);
    if (ladder === undefined) {
      ladder = new QuantileLadder();
      this.ladders.set(key, ladder);
    }
    const between = ladder.between(placement.total);
    if (between !== null) {
      this.ladderAnswers++;
      return between / fair;
    }
    const last = this.lastLevels.get(key);
    const relative = search(last === undefined ? Number.NaN : last.count + (fair - last.fair));
    const count = Math.round(relative * fair);
    this.lastLevels.set(key, { fair, count });
    ladder.add(placement.total, count);
    return relative;
  }

  private remember<T>(key: string, compute: () => T): T {
    const known = this.entries.get(key);
    if (known !== undefined) return known as T;
    const value = compute();
    if (this.entries.size >= this.capacity) {
      const oldest = this.entries.keys().next().value as string;
      this.entries.delete(oldest);
    }
    this.entries.set(key, value);
    return value;
  }
}

/**
 * The chance ceiling and floor of equal shares as whole counts, by total, for one alpha:
 * both are non-decreasing in the total N. (Coupling: N + 1 requests are N requests and one
 * more, so the fullest and the emptiest shard can only gain: P(max >= k) and P(min > k)
 * grow with N for every k, and the smallest count meeting the level can only rise.) So a
 * total lying between two totals already answered with the same count has that count too,
 * and needs no tail at all; steady traffic, whose totals wander within a few standard
 * deviations, soon asks mostly such questions. The answer is the engine's own wherever its
 * tails are monotone in N to their rounding (a tail within about 1e-10 of alpha aside).
 * Bounded: past {@link QuantileLadder.capacity} totals it starts again.
 */
class QuantileLadder {
  static readonly capacity = 2048;
  private totals: number[] = [];
  private counts: number[] = [];

  /** The count for `total` when the nearest known totals on both sides share it, else null. */
  between(total: number): number | null {
    const at = this.firstAtLeast(total);
    if (at < this.totals.length && this.totals[at] === total) return this.counts[at];
    if (at === 0 || at === this.totals.length) return null;
    return this.counts[at - 1] === this.counts[at] ? this.counts[at] : null;
  }

  add(total: number, count: number): void {
    if (this.totals.length >= QuantileLadder.capacity) {
      this.totals = [];
      this.counts = [];
    }
    const at = this.firstAtLeast(total);
    if (at < this.totals.length && this.totals[at] === total) return;
    this.totals.splice(at, 0, total);
    this.counts.splice(at, 0, count);
  }

  private firstAtLeast(total: number): number {
    let low = 0;
    let high = this.totals.length;
    while (low < high) {
      const mid = (low + high) >> 1;
      if (this.totals[mid] < total) low = mid + 1;
      else high = mid;
    }
    return low;
  }
}
