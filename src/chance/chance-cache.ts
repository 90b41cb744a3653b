import { twiddleTables, type Twiddles } from './fft-convolution.js';
import type { ShareClass } from './placement.js';
import type { ShareSweep, Side } from './share-sweep/sorted-shares.js';
import type { TailSums } from './share-sweep/tail-sums.js';

/**
 * The chance engine's work products kept across questions, in one object that its owner
 * passes down (the judge's memo owns one: src/judge/chance-memo.ts). Nothing here changes
 * an answer's value beyond what the engine documents for kept tables (a kept coefficient
 * table serves nearby loads within its checked error; docs/methods.md); it saves repeats:
 *
 * - per shares vector (a WeakMap keyed by the shares array, so an entry goes when its
 *   shares are dropped, as a learned baseline's are every window): the distinct share
 *   classes (placement.ts) and the share sweep of the latest total asked about
 *   (share-sweep/sorted-shares.ts). A sweep carries its own kept coefficient tables and
 *   tail states (share-sweep/coefficient-table.ts, tail-sums.ts), so they go with it, and
 *   a new total starts a new sweep with none;
 * - the latest binomial sweep's sums (extreme-load.ts: a quantile search asks about the
 *   same load quickly, then accurately): one slot;
 * - FFT twiddle tables, a pure function of the transform size (fft-convolution.ts): at
 *   most TWIDDLE_SIZES_KEPT sizes of up to 2^20 points, the oldest going first.
 *
 * So its memory is bounded by the share vectors its owner still holds, plus one sweep and
 * at most 48 MiB of twiddle tables. Callers with no cache of their own (odds, plan, the key
 * placement test, tests) share one default (chanceCacheOr), which keeps what the engine's
 * module-level caches kept before there was this object, so their answers are unchanged.
 * Not safe to share between threads (none are used).
 */
export class ChanceCache {
  private readonly byShares = new WeakMap<Float64Array, ShareWork>();
  private readonly twiddleSizes = new Map<number, Twiddles>();
  /** The latest binomial sweep's sums (share-sweep/tail-sums.ts), for lastTails in extreme-load.ts. */
  latestTails: LatestTails | null = null;
  /** Share sweeps built from scratch (sorting the shares), for tests and benches. */
  sweepsBuilt = 0;
  /** Twiddle tables computed, for tests and benches. */
  twiddlesBuilt = 0;

  /** What is kept for one shares vector, created empty on first use. O(1). */
  forShares(shares: Float64Array): ShareWork {
    let work = this.byShares.get(shares);
    if (work === undefined) {
      work = { classes: undefined, sweep: undefined };
      this.byShares.set(shares, work);
    }
    return work;
  }

  /** Whether anything is kept for this shares vector (for tests). */
  holds(shares: Float64Array): boolean {
    return this.byShares.has(shares);
  }

  /**
   * cos and sin of 2 pi k / n for k < n / 2 (twiddleTables), kept for the sizes used last:
   * a box's convolutions repeat a few sizes. Tables above 2^20 points are not kept (8 MiB
   * each). A bound function, so it can be handed to fftConvolve as is.
   */
  readonly twiddles = (n: number): Twiddles => {
    const kept = this.twiddleSizes.get(n);
    if (kept !== undefined) return kept;
    const tables = twiddleTables(n);
    this.twiddlesBuilt++;
    if (n > TWIDDLE_LARGEST_KEPT) return tables;
    if (this.twiddleSizes.size >= TWIDDLE_SIZES_KEPT) {
      const oldest = this.twiddleSizes.keys().next().value;
      if (oldest !== undefined) this.twiddleSizes.delete(oldest);
    }
    this.twiddleSizes.set(n, tables);
    return tables;
  };

  /** The transform sizes whose twiddle tables are kept, oldest first (for tests). */
  get twiddleSizesKept(): number[] {
    return [...this.twiddleSizes.keys()];
  }
}

/** Twiddle tables kept per cache (a box's convolutions repeat a few sizes). */
export const TWIDDLE_SIZES_KEPT = 6;
/** The largest transform whose twiddle tables are kept (two tables of 2^19 doubles). */
export const TWIDDLE_LARGEST_KEPT = 2 ** 20;

/** What a cache keeps for one shares vector. */
export interface ShareWork {
  /** The distinct shares in ascending order with their counts (undefined: not asked yet). */
  classes: readonly ShareClass[] | undefined;
  /**
   * The sweep of the latest total asked about (null: the shares are not swept; undefined:
   * not asked yet). Whether shares are swept depends on them alone; a new total reuses
   * their sorted order in a new sweep.
   */
  sweep: ShareSweep | null | undefined;
}

/** One binomial sweep's question and its sums. */
export interface LatestTails {
  readonly sweep: ShareSweep;
  readonly side: Side;
  readonly relative: number;
  readonly margin: number;
  readonly sums: TailSums | null;
}

let shared: ChanceCache | null = null;

/**
 * The cache given, or for callers without one the default shared by all of them (created
 * on first use). The judge never uses the default: its memo passes its own.
 */
export function chanceCacheOr(cache: ChanceCache | undefined): ChanceCache {
  if (cache !== undefined) return cache;
  shared ??= new ChanceCache();
  return shared;
}
