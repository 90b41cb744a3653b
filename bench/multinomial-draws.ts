import { RandomDraws } from '../src/scenario/random-draws.js';

/**
 * Seeded Multinomial(N, p) count vectors for calibration runs, without placing N requests
 * one by one. Method: draw independent Poisson(N p_i) counts (the pure-rand Mersenne Twister
 * behind RandomDraws), whose total T is near N; then, if T > N, remove T - N requests
 * chosen uniformly at random without replacement, and if T < N add N - T requests each
 * placed by the shares. Both corrections are exact: a uniformly random N-subset of T
 * independent placements is N independent placements, and so is adding independent ones;
 * given T the Poisson counts are Multinomial(T, p) (a standard property of independent
 * Poisson counts). Cost O(m + |T - N| log m), about O(m + sqrt(N) log m).
 */
export class MultinomialDraws {
  private readonly draws: RandomDraws;
  private tree = new Float64Array(0);
  private cumulativeFor: Float64Array | null = null;
  private cumulative = new Float64Array(0);

  /** @param seed 0..2^32-1 */
  constructor(seed: number) {
    this.draws = new RandomDraws(seed);
  }

  /**
   * Writes Multinomial(total, shares) counts into `out` (shares null: equal over out.length)
   * and returns `out`. `shares` must sum to 1.
   */
  draw(total: number, shares: Float64Array | null, out: Float64Array): Float64Array {
    const m = out.length;
    let drawn = 0;
    for (let shard = 0; shard < m; shard++) {
      const share = shares === null ? 1 / m : shares[shard];
      out[shard] = this.draws.poisson(total * share);
      drawn += out[shard];
    }
    if (drawn < total) {
      const cumulative = this.cumulativeShares(shares, m);
      for (let extra = drawn; extra < total; extra++)
        out[locate(cumulative, this.draws.uniform())]++;
    } else if (drawn > total) {
      this.removeUniformly(out, drawn - total, drawn);
    }
    return out;
  }

  /** Removes `count` of the `total` placements in `out`, uniformly without replacement. */
  private removeUniformly(out: Float64Array, count: number, total: number): void {
    const m = out.length;
    // A Fenwick tree over the counts finds the shard of the r-th placement in O(log m)
    // (P. M. Fenwick, "A new data structure for cumulative frequency tables", 1994).
    if (this.tree.length < m + 1) this.tree = new Float64Array(m + 1);
    const tree = this.tree;
    tree.fill(0, 0, m + 1);
    for (let i = 1; i <= m; i++) {
      tree[i] += out[i - 1];
      const parent = i + (i & -i);
      if (parent <= m) tree[parent] += tree[i];
    }
    let highBit = 1;
    while (highBit * 2 <= m) highBit *= 2;
    let left = total;
    for (let removed = 0; removed < count; removed++) {
      let rank = this.draws.integer(0, left - 1);
      let position = 0;
      for (let step = highBit; step > 0; step >>= 1) {
        const next = position + step;
        if (next <= m && tree[next] <= rank) {
          position = next;
          rank -= tree[next];
        }
      }
      // position is the number of shards whose cumulative count is <= rank: shard `position`.
      out[position]--;
      for (let i = position + 1; i <= m; i += i & -i) tree[i]--;
      left--;
    }
  }

  private cumulativeShares(shares: Float64Array | null, m: number): Float64Array {
    if (this.cumulativeFor === shares && this.cumulative.length === m) return this.cumulative;
    const cumulative = new Float64Array(m);
    let sum = 0;
    for (let shard = 0; shard < m; shard++) {
      sum += shares === null ? 1 / m : shares[shard];
      cumulative[shard] = sum;
    }
    this.cumulativeFor = shares;
    this.cumulative = cumulative;
    return cumulative;
  }
}

/** The first index whose cumulative share exceeds u (the last one if rounding leaves u above all). */
function locate(cumulative: Float64Array, u: number): number {
  let low = 0;
  let high = cumulative.length - 1;
  while (low < high) {
    const mid = (low + high) >> 1;
    if (cumulative[mid] > u) high = mid;
    else low = mid + 1;
  }
  return low;
}
