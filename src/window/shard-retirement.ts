import { tooManyShards, type ShardRemap, type ShardUniverse } from './shard-universe.js';

/**
 * Closed windows an id may go without a count before it retires, whatever the traffic.
 * Our choice, stated in the README: long enough that a quiet real shard is not churned in
 * and out of the universe, short enough that a shard that went away soon leaves m.
 */
export const retireAfterWindows = 10;

/**
 * How unlikely it must be that any live shard of a window is empty by chance before the ids
 * absent from it retire at once: 1 in 1000. With k shards reporting and a fair share of
 * N / k requests each, a live shard placed at random is empty with probability about
 * e^-(N / k), so the ids absent from the window retire when k e^-(N / k) <= 1 / 1000, that
 * is N / k >= ln(1000 k) (6.9 requests per shard for one shard, 11.1 for 64, 18.4 for
 * 100 000). Our choice, stated in the README; below it an empty window is too common among
 * live shards to mean that one is gone.
 */
export const chanceOfEmptyLiveShard = 1 / 1000;

/** The fair share over `reporting` shards at which absent ids retire at once (see above). */
export function absentShareForRetirement(reporting: number): number {
  return Math.log(reporting / chanceOfEmptyLiveShard);
}

/**
 * Decides, at each window boundary of a growing universe, which ids stopped reporting and
 * retires them (ShardUniverse.retire), so that m, the shards a window is judged over, is
 * the shards reporting now rather than every id ever seen, and a flood of bogus ids cannot
 * lock real shards out for the rest of the run. An id retires when it has no count in the
 * window closing nor in any window still open (so no load is ever dropped), and one of:
 *
 * - it has had no count in the last {@link retireAfterWindows} closed windows;
 * - the closing window's fair share over the shards that reported is so large that a live
 *   shard would hardly be empty ({@link chanceOfEmptyLiveShard});
 * - the universe refused an id for being full since the previous boundary: room for the
 *   newcomers goes to ids that are not reporting.
 *
 * Retirement happens only at a boundary, before the closing window is handed on, so every
 * window is judged on one set of ids. Memory: one number per shard. Cost per boundary:
 * O(m), plus O(m x open windows) when some id is a candidate.
 */
export class ShardRetirement {
  private readonly universe: ShardUniverse;
  /** Per index, the latest closed window that counted the id. */
  private lastCounted: Float64Array = new Float64Array(0);
  /** Ids of the universe that {@link lastCounted} covers (indices 0..tracked-1). */
  private tracked = 0;
  private refusedSeen: number;

  constructor(universe: ShardUniverse) {
    this.universe = universe;
    this.refusedSeen = universe.refusedFull;
  }

  /**
   * Window `window` (its index in hops) is closing with `counts` (indexed like the universe,
   * possibly longer; null: no counts) summing to `total`; `openCounts` are the windows still
   * open. Returns the remap when ids retired (the caller moves these arrays; listeners of the
   * universe have moved theirs), else null.
   */
  atBoundary(
    window: number,
    counts: Float64Array | null,
    total: number,
    openCounts: readonly Float64Array[],
  ): ShardRemap | null {
    const size = this.universe.size;
    this.track(size, window);
    let reporting = 0;
    for (let index = 0; index < size; index++) {
      if (counts !== null && index < counts.length && counts[index] > 0) {
        this.lastCounted[index] = window;
        reporting++;
      }
    }
    const refused = this.universe.refusedFull;
    const full = refused !== this.refusedSeen;
    this.refusedSeen = refused;
    const absentGoes =
      full || (reporting > 0 && total / reporting >= absentShareForRetirement(reporting));
    const candidate = (index: number) =>
      this.lastCounted[index] !== window &&
      (absentGoes || window - this.lastCounted[index] >= retireAfterWindows);
    let any = false;
    for (let index = 0; index < size && !any; index++) any = candidate(index);
    if (!any) return null;
    const keep = new Uint8Array(size);
    for (let index = 0; index < size; index++) if (!candidate(index)) keep[index] = 1;
    for (const open of openCounts) {
      const length = Math.min(size, open.length);
      for (let index = 0; index < length; index++) if (open[index] > 0) keep[index] = 1;
    }
    const remap = this.universe.retire((index) => keep[index] === 1);
    if (remap !== null) {
      this.lastCounted = remapCounts(this.lastCounted.subarray(0, size), remap);
      this.tracked = remap.size;
    }
    return remap;
  }

  /** Ids admitted since the last boundary count as seen now: they have had no window yet. */
  private track(size: number, window: number): void {
    if (this.lastCounted.length < size) {
      const grown = new Float64Array(Math.max(size, this.lastCounted.length * 2));
      grown.set(this.lastCounted.subarray(0, this.tracked));
      this.lastCounted = grown;
    }
    this.lastCounted.fill(window, this.tracked, size);
    this.tracked = size;
  }
}

/**
 * An array indexed like the universe, moved to the indices after a retirement: entry `old`
 * goes to `remap.indexAfter[old]`, retired entries are dropped. The result has `remap.size`
 * entries (entries past the previous size, if any, are dropped too). O(length).
 */
export function remapCounts(values: Float64Array, remap: ShardRemap): Float64Array {
  const moved = new Float64Array(remap.size);
  const length = Math.min(values.length, remap.indexAfter.length);
  for (let index = 0; index < length; index++) {
    const at = remap.indexAfter[index];
    if (at >= 0) moved[at] = values[index];
  }
  return moved;
}

/** {@link countsOfClosedWindow}'s answer. */
export interface ClosedWindowCounts {
  /** Load per shard, indexed like the universe after any retirement (length: its size). */
  readonly counts: Float64Array;
  readonly total: number;
  /** Ids a declared universe does not hold, with their load left out. */
  readonly outside: number;
  /** Ids a full growing universe still refused, with their load left out. */
  readonly tooMany: number;
}

/**
 * The count vector of a window put together elsewhere (`watch --merge` builds it from
 * partial summaries, keyed by shard id) over `universe`: the ids are admitted in the order
 * given; over a growing universe `retirement` then retires ids at this window's boundary
 * (window number `window`, in hops) as the event-time windows do, and the ids the full
 * universe refused are offered once more. O(ids in the window + m).
 */
export function countsOfClosedWindow(
  universe: ShardUniverse,
  retirement: ShardRetirement | null,
  window: number,
  loads: Iterable<readonly [string, number]>,
): ClosedWindowCounts {
  let counts: Float64Array = new Float64Array(universe.size);
  let total = 0;
  let outside = 0;
  const refused: (readonly [string, number])[] = [];
  const add = (index: number, load: number) => {
    if (index >= counts.length) {
      const grown = new Float64Array(Math.max(universe.size, counts.length * 2));
      grown.set(counts);
      counts = grown;
    }
    counts[index] += load;
    total += load;
  };
  for (const entry of loads) {
    const index = universe.admit(entry[0]);
    if (index === tooManyShards) refused.push(entry);
    else if (index < 0) outside++;
    else add(index, entry[1]);
  }
  if (retirement !== null) {
    const remap = retirement.atBoundary(window, counts, total, []);
    if (remap !== null) counts = remapCounts(counts, remap);
  }
  let tooMany = 0;
  for (const [shard, load] of refused) {
    const index = universe.admit(shard);
    if (index < 0) tooMany++;
    else add(index, load);
  }
  if (counts.length !== universe.size) {
    const fitted = new Float64Array(universe.size);
    fitted.set(counts.subarray(0, universe.size));
    counts = fitted;
  }
  return { counts, total, outside, tooMany };
}
