/**
 * Running extremes of relative load: the shard with the highest and the shard with the lowest
 * relative load of a window, seen one shard at a time, for the fullest- and emptiest-shard
 * tests. Each side may rank shards by its own value (the key placement test widens a sketch's
 * estimate toward each side by its error); the window summary ranks both by one.
 * Method: one pass with strict comparisons, so the first shard reaching an extreme keeps it
 * (common practice). Cost: O(1) a shard, no allocation. Domain: any numbers (a NaN is never an
 * extreme; with no shard seen, or none but NaN, both indices stay 0). Error: none, exact
 * comparisons.
 *
 * @example
 * const extremes = new LoadExtremes();
 * extremes.see(0, 1.2);
 * extremes.see(1, 0.8);
 * extremes.highest; // 0 (1.2)
 * extremes.lowest; // 1 (0.8)
 */
export class LoadExtremes {
  /** Index of the shard with the highest value seen so far. */
  highest = 0;
  /** Its value; -Infinity before any shard. */
  highestValue = -Infinity;
  /** Index of the shard with the lowest value seen so far. */
  lowest = 0;
  /** Its value; Infinity before any shard. */
  lowestValue = Infinity;

  /** Sees shard `index`, ranked by `towardHigh` for the highest and `towardLow` for the lowest. */
  see(index: number, towardHigh: number, towardLow = towardHigh): void {
    if (towardHigh > this.highestValue) {
      this.highestValue = towardHigh;
      this.highest = index;
    }
    if (towardLow < this.lowestValue) {
      this.lowestValue = towardLow;
      this.lowest = index;
    }
  }
}
