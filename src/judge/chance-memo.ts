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
 */
export class ChanceMemo {
  private readonly entries = new Map<string, unknown>();
  /** The last ceiling and floor per shares and alpha, in counts, as search guesses. */
  private readonly lastLevels = new Map<string, { fair: number; count: number }>();
  private readonly capacity: number;

  /** @param capacity most answers kept (default 4096) */
  constructor(capacity = 4096) {
    this.capacity = capacity;
  }

  /** P(max r >= relative), fullestTail. */
  fullestTail(placement: Placement, version: string, relative: number): TailProbability {
    return this.remember(`F${version}|${placement.total}|${relative}`, () =>
      fullestTail(placement, relative),
    );
  }

  /** P(min r <= relative), emptiestTail. */
  emptiestTail(placement: Placement, version: string, relative: number): TailProbability {
    return this.remember(`E${version}|${placement.total}|${relative}`, () =>
      emptiestTail(placement, relative),
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
          warmCeiling(placement, alpha, guess),
        );
      }
      return fullestQuantile(placement, 1 - alpha);
    });
  }

  /** The chance floor at `alpha`: emptiestQuantile(placement, alpha), warm-started likewise. */
  floor(placement: Placement, version: string, alpha: number): number {
    return this.remember(`L${version}|${placement.total}|${alpha}`, () => {
      if (placement.shares === null && placement.total > 0) {
        return this.warm(`L${version}|${alpha}`, placement, (guess) =>
          warmFloor(placement, alpha, guess),
        );
      }
      return emptiestQuantile(placement, alpha);
    });
  }

  /** P(at least `observed` empty shards), emptyShardsTail. */
  emptyTail(placement: Placement, version: string, observed: number): { logProbability: number } {
    return this.remember(`Z${version}|${placement.total}|${observed}`, () =>
      emptyShardsTail(placement, observed),
    );
  }

  /** Mean of the empty-shard count, emptyShardMoments. */
  emptyMean(placement: Placement, version: string): number {
    return this.remember(`M${version}|${placement.total}`, () => emptyShardMoments(placement).mean);
  }

  /**
   * Runs a warm-started search with a guess from the last answer under `key`: that count
   * moved by the change in fair share. Keeps the new answer as the next guess.
   */
  private warm(key: string, placement: Placement, search: (guess: number) => number): number {
    const fair = placement.total / placement.shardCount;
    const last = this.lastLevels.get(key);
    const relative = search(last === undefined ? Number.NaN : last.count + (fair - last.fair));
    this.lastLevels.set(key, { fair, count: relative * fair });
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
