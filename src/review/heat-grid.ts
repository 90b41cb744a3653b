/**
 * Mean relative load per shard per time column, for the heat strip, in memory that does not
 * grow with the length of the review: columns start one window wide, and whenever there
 * would be more than `2 x columns` of them, neighbours are merged in pairs (each column then
 * spans twice as many windows). Memory O(m x columns); O(m) per window, O(m x columns) per
 * merge, and merges happen log2(windows / columns) times.
 */
export class HeatGrid {
  private readonly least: number;
  private sums: Float32Array = new Float32Array(0);
  private shards = 0;
  private columnStarts: number[] = [];
  private columnEnds: number[] = [];
  private columnWindows: number[] = [];
  private windowsPerColumn = 1;

  /** @param columns fewest columns kept once there are that many windows (at most twice as many) */
  constructor(columns = 64) {
    this.least = columns;
  }

  /** Adds one window's relative loads (indexed by shard; a grown universe widens the grid). */
  add(start: number, end: number, relative: Float64Array, m: number): void {
    if (m > this.shards) this.widen(m);
    const last = this.columnStarts.length - 1;
    let column = last;
    if (last < 0 || this.columnWindows[last] >= this.windowsPerColumn) {
      if (this.columnStarts.length >= 2 * this.least) this.mergePairs();
      this.columnStarts.push(start);
      this.columnEnds.push(end);
      this.columnWindows.push(0);
      column = this.columnStarts.length - 1;
    }
    this.columnEnds[column] = end;
    this.columnWindows[column]++;
    const capacity = 2 * this.least;
    for (let shard = 0; shard < m; shard++) this.sums[shard * capacity + column] += relative[shard];
  }

  /** Columns: [start, end) epoch ms each. */
  get columns(): { readonly start: number; readonly end: number }[] {
    return this.columnStarts.map((start, at) => ({ start, end: this.columnEnds[at] }));
  }

  /** The shard's mean relative load in each column (0 before it existed). */
  means(shard: number): number[] {
    const capacity = 2 * this.least;
    return this.columnWindows.map((windows, column) =>
      shard < this.shards ? this.sums[shard * capacity + column] / windows : 0,
    );
  }

  /**
   * Follows a retirement of a growing universe: row `old` moves to `indexAfter[old]`, rows
   * of retired shards are dropped (their history leaves the strip with them). O(m x columns).
   */
  follow(indexAfter: Int32Array): void {
    const capacity = 2 * this.least;
    const moved = new Float32Array(this.sums.length);
    const rows = Math.min(this.shards, indexAfter.length);
    for (let shard = 0; shard < rows; shard++) {
      const at = indexAfter[shard];
      if (at < 0) continue;
      moved.set(this.sums.subarray(shard * capacity, (shard + 1) * capacity), at * capacity);
    }
    this.sums = moved;
  }

  private widen(m: number): void {
    const capacity = 2 * this.least;
    const grown = new Float32Array(Math.max(m, this.shards * 2) * capacity);
    grown.set(this.sums);
    this.sums = grown;
    this.shards = grown.length / capacity;
  }

  private mergePairs(): void {
    const capacity = 2 * this.least;
    const count = this.columnStarts.length;
    const kept = Math.ceil(count / 2);
    for (let shard = 0; shard < this.shards; shard++) {
      const row = shard * capacity;
      for (let column = 0; column < kept; column++) {
        const left = row + 2 * column;
        this.sums[row + column] =
          this.sums[left] + (2 * column + 1 < count ? this.sums[left + 1] : 0);
      }
      this.sums.fill(0, row + kept, row + capacity);
    }
    const starts: number[] = [];
    const ends: number[] = [];
    const windows: number[] = [];
    for (let column = 0; column < kept; column++) {
      const right = Math.min(2 * column + 1, count - 1);
      starts.push(this.columnStarts[2 * column]);
      ends.push(this.columnEnds[right]);
      windows.push(
        this.columnWindows[2 * column] + (right > 2 * column ? this.columnWindows[right] : 0),
      );
    }
    this.columnStarts = starts;
    this.columnEnds = ends;
    this.columnWindows = windows;
    this.windowsPerColumn *= 2;
  }
}
