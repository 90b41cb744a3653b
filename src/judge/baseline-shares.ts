/**
 * The `baseline` null model: shard shares learned from the trailing windows ("hotter than
 * this shard usually is"), for clusters whose shares are unknown or drift away from the
 * declared ones (hot keys, uneven hash ranges).
 *
 * Learning: exponentially weighted counts with the span convention of common practice,
 * weight factor lambda = 1 - 2 / (span + 1) per learned window (span 60: a window 30
 * windows old counts about 1/e as much as the newest).
 *
 * Shrinkage: the learned shares are the posterior mean under a Dirichlet prior centred on
 * the declared shares with concentration {@link priorRequestsPerShard} x m requests:
 *   q_i = (S_i + kappa p_i) / (S + kappa),
 * S_i the weighted counts, S their sum, kappa the prior weight. A quiet cluster stays near
 * its declared shares, a busy one follows its data.
 *
 * Uncertainty: q_i is itself an estimate, so under H0 the current count x_i varies about
 * N q_i by N q_i (1 + N / S_eff) rather than N q_i, where S_eff = (S + kappa)^2 / sum_t
 * w_t^2 N_t is the effective number of requests behind the estimate (the usual variance of
 * a weighted mean). The judge divides the counts by 1 + N / S_eff, the same device as the
 * robust spread mode, so the tests keep their level against a learned null.
 *
 * Until {@link BaselineShares.neededWindows} windows are learned the declared shares are
 * the null and every window with traffic is learned, flagged or not: flags against the
 * declared shares say nothing about what this cluster's load usually looks like, and
 * refusing them would keep a cluster with hot keys from ever learning. Once ready, windows
 * with an open incident or a flagged shard are not learned, so a fault does not become the
 * new normal. O(m) per window.
 */
export class BaselineShares {
  /** Windows needed before the learned shares replace the declared ones. */
  readonly neededWindows: number;
  private readonly decay: number;
  private weighted = new Float64Array(0);
  private weightedTotal = 0;
  /** sum_t w_t^2 N_t, for the effective sample size. */
  private weightedSquares = 0;
  private learned = 0;
  private version = 0;

  /** @param spanWindows `--baseline`, a whole number >= 1 (checked by the judge's settings) */
  constructor(spanWindows: number) {
    this.decay = 1 - 2 / (spanWindows + 1);
    this.neededWindows = Math.max(1, Math.ceil(spanWindows / 4));
  }

  /** Windows learned so far. */
  get learnedWindows(): number {
    return this.learned;
  }

  /** True once the learned shares are the null. */
  get ready(): boolean {
    return this.learned >= this.neededWindows;
  }

  /** Changes whenever the learned shares change (a cache key for the chance engine). */
  get sharesVersion(): number {
    return this.version;
  }

  /**
   * The learned shares over `shardCount` shards, shrunk toward `declared` (null: equal).
   * Shards not seen before (a growing universe) start from the prior alone. O(m).
   */
  shares(shardCount: number, declared: Float64Array | null): Float64Array {
    const prior = priorRequestsPerShard * shardCount;
    const out = new Float64Array(shardCount);
    const denominator = this.weightedTotal + prior;
    for (let shard = 0; shard < shardCount; shard++) {
      const declaredShare = declared === null ? 1 / shardCount : declared[shard];
      const learned = shard < this.weighted.length ? this.weighted[shard] : 0;
      out[shard] = (learned + prior * declaredShare) / denominator;
    }
    // The universe may have grown since learning: renormalise so the shares sum to 1.
    let sum = 0;
    for (let shard = 0; shard < shardCount; shard++) sum += out[shard];
    for (let shard = 0; shard < shardCount; shard++) out[shard] /= sum;
    return out;
  }

  /**
   * The factor 1 / (1 + N / S_eff) (at most 1) that keeps a window of `total` requests
   * from reading the baseline's own sampling noise as evidence. 1 before any learning.
   */
  uncertaintyScale(total: number, shardCount: number): number {
    if (this.weightedSquares === 0) return 1;
    const behind = this.weightedTotal + priorRequestsPerShard * shardCount;
    const effective = (behind * behind) / this.weightedSquares;
    return 1 / (1 + total / effective);
  }

  /** Learns one window's counts (the caller decides whether it should). O(m). */
  learn(counts: ArrayLike<number>, total: number): void {
    if (counts.length > this.weighted.length) {
      const grown = new Float64Array(counts.length);
      grown.set(this.weighted);
      this.weighted = grown;
    }
    const decay = this.decay;
    for (let shard = 0; shard < this.weighted.length; shard++) {
      this.weighted[shard] =
        decay * this.weighted[shard] + (shard < counts.length ? counts[shard] : 0);
    }
    this.weightedTotal = decay * this.weightedTotal + total;
    this.weightedSquares = decay * decay * this.weightedSquares + total;
    this.learned++;
    this.version++;
  }

  /**
   * Follows a retirement of a growing universe (`indexAfter[old]` is a shard's new index,
   * -1 when it retired, `size` the shards after): retired shards' weight leaves the
   * learned total, and sum w_t^2 N_t shrinks in the same proportion, as if their requests
   * had never been counted. O(m).
   */
  follow(indexAfter: Int32Array, size: number): void {
    const moved = new Float64Array(size);
    let kept = 0;
    const length = Math.min(this.weighted.length, indexAfter.length);
    for (let shard = 0; shard < length; shard++) {
      const at = indexAfter[shard];
      if (at < 0) continue;
      moved[at] = this.weighted[shard];
      kept += this.weighted[shard];
    }
    if (this.weightedTotal > 0) this.weightedSquares *= Math.min(1, kept / this.weightedTotal);
    this.weighted = moved;
    this.weightedTotal = kept;
    this.version++;
  }
}

/**
 * The prior's weight: as many requests as 100 per shard at the declared shares. Our own
 * choice, stated: with 1000 requests per shard per window the prior is worth well under 1%
 * of a ready baseline; with 1 per shard per window it holds the shares near the declared
 * ones, where the data could not tell them apart anyway.
 */
export const priorRequestsPerShard = 100;
