import type { SequentialFlag } from './incident-tracker.js';

/**
 * Evidence accumulated across windows: a one-sided CUSUM per shard (E. S. Page,
 * "Continuous inspection schemes", Biometrika 41, 1954) on the log-likelihood ratio of the
 * shard's judged count, share (1 + excess) p against p. A shard that runs a little hot for
 * long (1.2x at 100 requests per shard, say, where one window at alpha 0.001 rejects about
 * once in a hundred) gains about the Kullback-Leibler information per window and crosses
 * the threshold h after about h / information windows, where k flags in a row would take
 * far longer.
 *
 * Per window and shard, with the judged (dispersion-scaled) total N and count x:
 *   Z = x ln(q / p) + (N - x) ln((1 - q) / (1 - p)),  q = (1 + excess) p,
 *   S = max(0, S + w Z),
 * w = hop / window length (1 for tumbling windows; overlapping windows see each request
 * length / hop times, and the weight counts it once on average). S >= h raises the alarm;
 * the shard is reported hot only once its run of evidence (windows since S left 0) spans
 * `confirm` windows, so the sequential test never opens an incident on fewer windows than
 * the window test needs (under the null a run that crossed h sooner is nearly always still
 * alarmed then, so the run length barely changes); S is then held at h and the shard stays hot until S falls back
 * to 0, so the alarm outlasts the excess by about h / (information per window) windows and
 * does not flicker while the excess persists. A window with too little traffic resets
 * every S: evidence is summed over consecutive judged windows only. Shards whose
 * (1 + excess) p reaches 1 are not tested.
 *
 * Break-even: Z has mean zero under a true share of about r p, r = excess / ln(1 + excess)
 * (1.097 at excess 0.2, from the Poisson form of Z); a persistent excess below it is never
 * found, one above it the sooner the larger.
 *
 * Cost: O(m) per window with typed arrays (one logarithm per distinct share).
 */
export class SequentialEvidence {
  private readonly excess: number;
  private readonly confirm: number;
  private statistic = new Float64Array(0);
  private since = new Float64Array(0);
  private alarmed = new Uint8Array(0);
  /** Windows in the current run of evidence (since S left 0). */
  private runWindows = new Uint32Array(0);
  private thresholdMemo: { shards: number; target: number; threshold: number } | null = null;

  /**
   * @param excess the design excess (--min-excess), > 0
   * @param confirm --confirm: the least windows of evidence the test reports a shard on
   */
  constructor(excess: number, confirm: number) {
    this.excess = excess;
    this.confirm = confirm;
  }

  /**
   * The threshold h for m shards at a target false-incident rate of `windowsRate` (false
   * incidents per window, all shards together): every shard's run length under the null is
   * at least m / windowsRate for any traffic, by {@link leastNullRunLength}. Memoised.
   */
  threshold(shards: number, windowsRate: number): number {
    const memo = this.thresholdMemo;
    if (memo?.shards === shards && memo.target === windowsRate) return memo.threshold;
    const threshold = cusumThreshold(shards / windowsRate);
    this.thresholdMemo = { shards, target: windowsRate, threshold };
    return threshold;
  }

  /**
   * Adds one judged window and returns the shards held hot, in index order.
   * @param windowStart epoch ms (the start of a run of evidence)
   * @param weight hop / window length, in (0, 1]
   * @param counts judged counts, first m read
   * @param total their total N
   * @param shares null shares (null: equal)
   * @param threshold h from {@link threshold}
   */
  update(
    windowStart: number,
    weight: number,
    counts: ArrayLike<number>,
    total: number,
    shares: Float64Array | null,
    m: number,
    threshold: number,
  ): SequentialFlag[] {
    this.ensure(m);
    const logRatio = Math.log1p(this.excess);
    const hot: SequentialFlag[] = [];
    let equalPerCount = 0;
    let equalPerTotal = 0;
    const equalTested = shares === null && (1 + this.excess) / m < 1;
    if (shares === null) {
      const restRatio = Math.log1p(-(1 + this.excess) / m) - Math.log1p(-1 / m);
      equalPerCount = logRatio - restRatio;
      equalPerTotal = restRatio;
    }
    for (let shard = 0; shard < m; shard++) {
      let perCount = equalPerCount;
      let perTotal = equalPerTotal;
      if (shares !== null) {
        const share = shares[shard];
        const alternative = (1 + this.excess) * share;
        if (!(share > 0 && alternative < 1)) {
          this.clearShard(shard);
          continue;
        }
        perTotal = Math.log1p(-alternative) - Math.log1p(-share);
        perCount = logRatio - perTotal;
      } else if (!equalTested) {
        this.clearShard(shard);
        continue;
      }
      const increment = weight * (counts[shard] * perCount + total * perTotal);
      const before = this.statistic[shard];
      let after = Math.max(0, before + increment);
      if (before === 0 && after > 0) {
        this.since[shard] = windowStart;
        this.runWindows[shard] = 0;
      }
      if (after >= threshold) {
        this.alarmed[shard] = 1;
        after = threshold;
      } else if (after === 0) {
        this.alarmed[shard] = 0;
      }
      this.statistic[shard] = after;
      if (after > 0) this.runWindows[shard]++;
      if (this.alarmed[shard] === 1 && this.runWindows[shard] >= this.confirm) {
        hot.push({ index: shard, since: this.since[shard] });
      }
    }
    return hot;
  }

  /** A window without evidence: every run of evidence ends. O(m). */
  reset(): void {
    this.statistic.fill(0);
    this.alarmed.fill(0);
  }

  /** Forgets one shard's evidence (its incident cleared). */
  forget(shard: number): void {
    if (shard < this.statistic.length) this.clearShard(shard);
  }

  /** The current statistic of a shard (0 when never tested). */
  statisticOf(shard: number): number {
    return shard < this.statistic.length ? this.statistic[shard] : 0;
  }

  private clearShard(shard: number): void {
    this.statistic[shard] = 0;
    this.alarmed[shard] = 0;
  }

  private ensure(m: number): void {
    if (this.statistic.length >= m) return;
    const statistic = new Float64Array(m);
    statistic.set(this.statistic);
    const since = new Float64Array(m);
    since.set(this.since);
    const alarmed = new Uint8Array(m);
    alarmed.set(this.alarmed);
    const runWindows = new Uint32Array(m);
    runWindows.set(this.runWindows);
    this.runWindows = runWindows;
    this.statistic = statistic;
    this.since = since;
    this.alarmed = alarmed;
  }
}

/** Siegmund's overshoot constant: 2 x 0.583, 0.583 = -zeta(1/2) / sqrt(2 pi). */
const overshoot = 1.166;

/**
 * Null average run length of a log-likelihood-ratio CUSUM, Siegmund's approximation
 * (D. Siegmund, "Sequential Analysis", Springer 1985, eq. (2.57) for normal increments):
 * for increments with mean -drift and standard deviation sd under the null,
 *   ARL0 ~ (e^(h + 1.166 sd) - h - 1.166 sd - 1) / drift.
 * Exact in form for normal increments (there drift = sd^2 / 2; 1.166 sd corrects for the
 * overshoot of the boundaries); for counts it treats the increment as normal, good while sd
 * is of order 1 and the count is not tiny. O(1).
 *
 * @example siegmundNullRunLength(4, 0.5, 1) // (e^5.166 - 5.166 - 1) / 0.5 = 338.1
 */
export function siegmundNullRunLength(threshold: number, drift: number, sd: number): number {
  const b = threshold + overshoot * sd;
  return (Math.expm1(b) - b) / drift;
}

/**
 * The least null average run length over every traffic level: Siegmund's approximation for
 * normal increments (drift = shift^2 / 2, sd = shift) minimised over the per-window shift
 * (shift = excess sqrt(N p) for counts). Both ends are long: a tiny shift drifts slowly
 * toward h, a large one starts far below it. The minimum lies near shift = 2 / 1.166 = 1.7,
 * where it is about 5 e^h for large h. Golden-section search on log shift. O(60).
 *
 * @example leastNullRunLength(20) // about 2.44e9 (5.03 e^20)
 */
export function leastNullRunLength(threshold: number): number {
  const at = (logShift: number) => {
    const shift = Math.exp(logShift);
    return siegmundNullRunLength(threshold, (shift * shift) / 2, shift);
  };
  const golden = (Math.sqrt(5) - 1) / 2;
  let low = Math.log(0.01);
  let high = Math.log(100);
  let a = high - golden * (high - low);
  let b = low + golden * (high - low);
  let atA = at(a);
  let atB = at(b);
  for (let step = 0; step < 60; step++) {
    if (atA < atB) {
      high = b;
      b = a;
      atB = atA;
      a = high - golden * (high - low);
      atA = at(a);
    } else {
      low = a;
      a = b;
      atA = atB;
      b = low + golden * (high - low);
      atB = at(b);
    }
  }
  return Math.min(atA, atB);
}

/**
 * The threshold h whose least null run length ({@link leastNullRunLength}) is `runLength`
 * windows, by bisection on [0, 200] to 1e-9. At least 0.
 *
 * @example cusumThreshold(6.4e10) // about 23.3: 64 shards at 0.001^3 per window
 */
export function cusumThreshold(runLength: number): number {
  if (leastNullRunLength(0) >= runLength) return 0;
  let low = 0;
  let high = 200;
  while (high - low > 1e-9) {
    const mid = (low + high) / 2;
    if (leastNullRunLength(mid) < runLength) low = mid;
    else high = mid;
  }
  return high;
}
