/** One monitored key of a Space-Saving summary. */
export interface HeavyHitter {
  readonly key: string;
  /** Estimated requests: never below the true count, at most `overestimate` above it. */
  readonly count: number;
  /**
   * The most the estimate can exceed the true count (the counter's inherited minimum when
   * the key took it over). The true count lies in [count - overestimate, count].
   */
  readonly overestimate: number;
}

/**
 * Space-Saving heavy hitters: the most requested keys of a stream in `capacity` counters
 * (A. Metwally, D. Agrawal and A. El Abbadi, "Efficient computation of frequent and top-k
 * elements in data streams", ICDT 2005). A monitored key's counter grows by each of its
 * requests; an unmonitored key takes over the smallest counter, inheriting its count as its
 * overestimate. Guarantees from the paper (Lemmas 3.3 and 3.4), with N the requests seen:
 * every count overestimates by at most its recorded overestimate, which is at most the
 * smallest counter and at most N / capacity; every key with more than N / capacity
 * requests is monitored. The counts of the monitored keys sum to N exactly.
 *
 * Weighted requests (a record with count c) add c at once, the usual weighted form of the
 * algorithm; the bounds above hold with N the summed weights.
 *
 * Memory: `capacity` keys (each at most 128 code units, see key-text.ts) and two numbers
 * each, whatever the number of distinct keys. Cost per request: one Map lookup, and an
 * O(capacity) scan for the smallest counter when an unmonitored key arrives at a full
 * summary (capacity is small, 16 by default, so a scan beats a heap's bookkeeping).
 *
 * @example const top = new SpaceSaving(2); top.add('a', 1); top.add('b', 1); top.add('c', 1);
 *   top.top() // [{key: 'c', count: 2, overestimate: 1}, {key: 'b', count: 1, overestimate: 0}]
 */
export class SpaceSaving {
  readonly capacity: number;
  private readonly slotOf = new Map<string, number>();
  private readonly keys: string[] = [];
  private readonly counts: Float64Array;
  private readonly overestimates: Float64Array;
  private seen = 0;

  /** @param capacity counters kept, a whole number >= 1 */
  constructor(capacity: number) {
    if (!Number.isSafeInteger(capacity) || capacity < 1) {
      throw new RangeError(`Space-Saving needs at least one counter, got ${capacity}`);
    }
    this.capacity = capacity;
    this.counts = new Float64Array(capacity);
    this.overestimates = new Float64Array(capacity);
  }

  /** Requests counted, N. */
  get total(): number {
    return this.seen;
  }

  /** Counts `count` requests for `key`. */
  add(key: string, count: number): void {
    this.seen += count;
    const slot = this.slotOf.get(key);
    if (slot !== undefined) {
      this.counts[slot] += count;
      return;
    }
    const used = this.keys.length;
    if (used < this.capacity) {
      this.slotOf.set(key, used);
      this.keys.push(key);
      this.counts[used] = count;
      this.overestimates[used] = 0;
      return;
    }
    let smallest = 0;
    for (let at = 1; at < used; at++) if (this.counts[at] < this.counts[smallest]) smallest = at;
    this.slotOf.delete(this.keys[smallest]);
    this.slotOf.set(key, smallest);
    this.keys[smallest] = key;
    this.overestimates[smallest] = this.counts[smallest];
    this.counts[smallest] += count;
  }

  /**
   * The smallest counter once every counter is in use, else 0: no unmonitored key has
   * more requests than this (Metwally et al. 2005, Lemma 3.4).
   */
  get smallestCount(): number {
    if (this.keys.length < this.capacity) return 0;
    let smallest = Infinity;
    for (let at = 0; at < this.keys.length; at++) smallest = Math.min(smallest, this.counts[at]);
    return smallest;
  }

  /** The monitored keys, most requested first (ties: the smaller overestimate first). O(k log k). */
  top(limit = this.capacity): HeavyHitter[] {
    const entries: HeavyHitter[] = this.keys.map((key, slot) => ({
      key,
      count: this.counts[slot],
      overestimate: this.overestimates[slot],
    }));
    entries.sort(
      (a, b) =>
        b.count - a.count ||
        a.overestimate - b.overestimate ||
        (a.key < b.key ? -1 : a.key > b.key ? 1 : 0),
    );
    return entries.slice(0, limit);
  }
}
