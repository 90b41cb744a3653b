import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { describe, expect, it } from 'vitest';
import {
  ChanceCache,
  chanceCacheOr,
  TWIDDLE_LARGEST_KEPT,
  TWIDDLE_SIZES_KEPT,
} from '../../src/chance/chance-cache.js';
import { emptyShardsTail } from '../../src/chance/empty-shards.js';
import { twiddleTables } from '../../src/chance/fft-convolution.js';
import { normalBox } from '../../src/chance/gaussian-box.js';
import { makePlacement, shareClasses } from '../../src/chance/placement.js';
import {
  emptiestQuantile,
  emptiestTail,
  fullestQuantile,
  fullestTail,
} from '../../src/chance/shard-extremes.js';
import { fullestMean } from '../../src/chance/extreme-means.js';
import { shareSweep } from '../../src/chance/share-sweep/sorted-shares.js';
import { summarizeWindow } from '../../src/chance/window-summary.js';

// What the cache keeps and for how long. The answers themselves are checked against
// outside references in the other files of test/chance; here the reference is the engine
// asked with a fresh cache (the same computation from scratch), and the structure of what
// is kept (identity, counts, sizes).

/** 600 weighted shards (shares 1 : 2 : 3 repeating, invented): swept (SWEEP_FROM is 500). */
function weights(): number[] {
  return Array.from({ length: 600 }, (_, i) => 1 + (i % 3));
}

/** A full garbage collection (V8's gc, exposed for this test). */
async function collectGarbage(): Promise<void> {
  setFlagsFromString('--expose-gc');
  const gc = runInNewContext('gc') as () => void;
  // WeakRefs read in this job stay alive until it ends: collect in a later one.
  for (let round = 0; round < 3; round++) {
    await new Promise((resolve) => setTimeout(resolve, 0));
    gc();
  }
}

describe('ChanceCache', () => {
  it('a second question about the same shares reuses their sweep and classes', () => {
    const cache = new ChanceCache();
    const placement = makePlacement(100_000, 600, weights());
    const sweep = shareSweep(placement, cache);
    expect(sweep).not.toBeNull();
    expect(shareSweep(placement, cache)).toBe(sweep);
    const classes = shareClasses(placement, cache);
    expect(classes).toHaveLength(3);
    expect(shareClasses(placement, cache)).toBe(classes);
    fullestTail(placement, 1.1, { cache });
    emptiestTail(placement, 0.9, { cache });
    fullestQuantile(placement, 0.999, cache);
    expect(cache.sweepsBuilt).toBe(1);
    expect(shareSweep(placement, cache)).toBe(sweep);
    // The accurate search kept a table on the sweep (side high).
    expect(sweep!.kept.high.table).toBeDefined();
  });

  it('a new total keeps the sorted shares but starts a sweep with nothing kept', () => {
    const cache = new ChanceCache();
    const shares = weights();
    const first = makePlacement(100_000, 600, shares);
    const sweep = shareSweep(first, cache)!;
    fullestQuantile(first, 0.999, cache);
    expect(sweep.kept.high.table).toBeDefined();
    // Same shares array, another total (as a judge's placements of one universe are).
    const next = { ...first, total: 120_000 };
    const moved = shareSweep(next, cache)!;
    expect(moved).not.toBe(sweep);
    expect(moved.total).toBe(120_000);
    expect(moved.shares).toBe(sweep.shares);
    expect(moved.kept.high.table).toBeUndefined();
    expect(moved.kept.low.table).toBeUndefined();
    expect(cache.sweepsBuilt).toBe(1);
  });

  it('questions asked with a cache use it alone: the default stays untouched', () => {
    const cache = new ChanceCache();
    const placement = makePlacement(30_000, 600, weights());
    const counts = Float64Array.from({ length: 600 }, (_, i) => 50 * (1 + (i % 3)));
    counts[0] = 0;
    summarizeWindow(placement, counts, 0.001, true, cache);
    emptyShardsTail(placement, 1, cache);
    fullestMean(placement, cache);
    emptiestQuantile(placement, 0.001, cache);
    expect(cache.holds(placement.shares!)).toBe(true);
    expect(chanceCacheOr(undefined).holds(placement.shares!)).toBe(false);
    // Asked without one, the shares land in the default.
    fullestTail(placement, 1.1);
    expect(chanceCacheOr(undefined).holds(placement.shares!)).toBe(true);
  });

  it('two caches answer alike: what is kept saves work, it is not part of the answer', () => {
    const placement = makePlacement(1_000_000, 600, weights());
    const asked = (cache: ChanceCache) => [
      fullestQuantile(placement, 0.999, cache),
      emptiestQuantile(placement, 0.001, cache),
      fullestTail(placement, 1.01, { cache }).logProbability,
    ];
    expect(asked(new ChanceCache())).toEqual(asked(new ChanceCache()));
  });

  it('keeps twiddle tables for the latest sizes only, and none above 2^20 points', () => {
    const cache = new ChanceCache();
    const n = 1024;
    const tables = cache.twiddles(n);
    // The twiddle factors by definition, cos and sin of 2 pi k / n (common practice).
    expect(tables.cosTable[n / 8]).toBeCloseTo(Math.cos(Math.PI / 4), 15);
    expect(tables.sinTable[n / 4]).toBe(Math.sin(Math.PI / 2));
    expect(tables).toEqual(twiddleTables(n));
    expect(cache.twiddles(n)).toBe(tables);
    expect(cache.twiddlesBuilt).toBe(1);
    for (let size = 2 ** 4; size <= 2 ** 12; size *= 2) cache.twiddles(size);
    expect(cache.twiddleSizesKept).toHaveLength(TWIDDLE_SIZES_KEPT);
    expect(cache.twiddleSizesKept).toEqual([2 ** 7, 2 ** 8, 2 ** 9, 2 ** 10, 2 ** 11, 2 ** 12]);
    cache.twiddles(2 * TWIDDLE_LARGEST_KEPT);
    expect(cache.twiddleSizesKept).not.toContain(2 * TWIDDLE_LARGEST_KEPT);
    expect(cache.twiddleSizesKept).toHaveLength(TWIDDLE_SIZES_KEPT);
  });

  it('the normal-limit box takes its FFT twiddles from the cache given', () => {
    const cache = new ChanceCache();
    // Two halves, cuts 0.1 (the case of gaussian-box.test.ts): several FFT products.
    const cuts = [
      { share: 0.5, cut: 0.1 },
      { share: 0.5, cut: 0.1 },
    ];
    const first = normalBox(cuts, cache);
    const built = cache.twiddlesBuilt;
    expect(built).toBeGreaterThan(0);
    expect(normalBox(cuts, cache)).toEqual(first);
    expect(cache.twiddlesBuilt).toBe(built);
    expect(normalBox(cuts, new ChanceCache())).toEqual(first);
  });

  it('lets the work on a shares vector go once the shares are dropped', async () => {
    const cache = new ChanceCache();
    const kept = (() => {
      const placement = makePlacement(100_000, 600, weights());
      const sweep = shareSweep(placement, cache)!;
      shareClasses(placement, cache);
      return {
        shares: new WeakRef(placement.shares!),
        sweep: new WeakRef(sweep),
        sorted: new WeakRef(sweep.shares),
      };
    })();
    await collectGarbage();
    expect(kept.shares.deref()).toBeUndefined();
    expect(kept.sweep.deref()).toBeUndefined();
    expect(kept.sorted.deref()).toBeUndefined();
  });

  it('keeps the work while its owner holds the shares', async () => {
    const cache = new ChanceCache();
    const placement = makePlacement(100_000, 600, weights());
    const sweep = new WeakRef(shareSweep(placement, cache)!);
    await collectGarbage();
    expect(sweep.deref()).toBeDefined();
    expect(shareSweep(placement, cache)).toBe(sweep.deref());
    expect(cache.sweepsBuilt).toBe(1);
  });
});
