import { logBinomialAtLeast, logBinomialAtMost } from '../chance/tails.js';

/**
 * The spread of one window as a histogram of relative loads r = x / (N p), beside the
 * histogram random placement predicts for the same window: the expected number of shards
 * in each bin, sum over shards of P(r_i in bin) with x_i ~ Binomial(N, p_i).
 *
 * The prediction uses the total the verdict was judged on (N, or N divided by the
 * dispersion in robust mode), so the predicted bars are as wide as the null the verdict
 * rested on. Relative loads do not change when counts are scaled, so the observed bars are
 * the same in both modes.
 */
export interface LoadHistogram {
  /** Relative load where the first inner bin starts. */
  readonly low: number;
  /** Relative load where the last inner bin ends. */
  readonly high: number;
  /** Inner bins of equal width between low and high. */
  readonly bins: number;
  /**
   * Shards per bin: index 0 holds those below `low`, 1..bins the inner bins (each
   * [start, end)), bins + 1 those at or above `high`.
   */
  readonly observed: Uint32Array;
  /** Expected shards per bin under random placement, laid out as `observed`. */
  readonly expected: Float64Array;
  /** Requests the prediction places: the judged total, rounded to a whole number. */
  readonly predictedRequests: number;
  /** True when many distinct shares were grouped for the prediction (see {@link loadHistogram}). */
  readonly groupedShares: boolean;
}

/** What {@link loadHistogram} bins. */
export interface LoadHistogramInput {
  /** Load per shard. */
  readonly counts: ArrayLike<number>;
  /** N, the sum of counts; above 0. */
  readonly total: number;
  /** The total the verdict was judged on (Judgement.judgedRequests); above 0. */
  readonly judgedTotal: number;
  /** Expected shares, one per shard (normalised here), or null for equal shares. */
  readonly shares: ArrayLike<number> | null;
  /** Relative-load range of the inner bins; low < high. */
  readonly low: number;
  readonly high: number;
  /** Inner bins, at least 1. */
  readonly bins: number;
}

/** Most share classes evaluated one by one; beyond, shares are grouped by rank. */
const mostShareClasses = 48;

/**
 * The inner range of the histogram: the chance floor to the chance ceiling, widened on
 * both sides by half their distance from the fair share, so the bulk of the shards fills
 * the middle of the chart and anything outside the chance band stands apart in the edge
 * bins. Without a floor (cold tests off) the floor is mirrored from the ceiling.
 * Example: loadHistogramRange(1.13, 0.87) is about {low: 0.805, high: 1.195}.
 */
export function loadHistogramRange(
  ceiling: number,
  floor: number | null,
): { low: number; high: number } {
  const above = Math.max(ceiling - 1, 1e-6);
  const below = floor === null ? above : Math.max(1 - floor, 1e-6);
  return {
    low: Math.max(0, 1 - below * 1.5),
    high: 1 + above * 1.5,
  };
}

/**
 * Bins the window's relative loads and predicts the bins under random placement.
 *
 * The prediction for a shard with share p is P(a <= X / (N' p) < b), X ~ Binomial(N', p),
 * N' the judged total rounded: the difference of two binomial tails (tails.ts, Loader 2000
 * densities summed from the tail's first term), taken on whichever side of the mean keeps
 * both tails small, so no bin loses digits to 1 - (1 - tiny). Shards with the same share
 * are evaluated once. With more than 48 distinct shares they are grouped into 48 classes of
 * equal size by rank of share, each evaluated at its mean share: an approximation for the
 * picture only (a verdict never uses it), flagged in `groupedShares`.
 *
 * Cost: O(m) to bin, plus (bins + 2) tail pairs per share class, each O(terms) with about
 * 9 standard deviations of terms at the centre. Example: 64 equal shards, N = 64000, 24 bins:
 * one class, about 26 tail pairs.
 */
export function loadHistogram(input: LoadHistogramInput): LoadHistogram {
  const { counts, total, low, high, bins } = input;
  const m = counts.length;
  if (!(total > 0) || !(input.judgedTotal > 0)) {
    throw new RangeError(`a histogram needs requests, got total ${total}`);
  }
  if (!(high > low) || !Number.isSafeInteger(bins) || bins < 1) {
    throw new RangeError(`bad histogram range ${low}..${high} with ${bins} bins`);
  }
  const shares = normalisedShares(input.shares, m);
  const binWidth = (high - low) / bins;
  const observed = new Uint32Array(bins + 2);
  for (let shard = 0; shard < m; shard++) {
    const relative = counts[shard] / (total * (shares === null ? 1 / m : shares[shard]));
    observed[binOf(relative, low, high, binWidth, bins)]++;
  }

  const trials = Math.max(1, Math.round(input.judgedTotal));
  const expected = new Float64Array(bins + 2);
  const classes = shareClassesOf(shares, m);
  for (const { share, count } of classes) {
    const mean = trials * share;
    // Bin b covers counts from the first whole count at or above its start to the one below its end.
    let previousStart = 0;
    for (let bin = 0; bin <= bins; bin++) {
      const edge = low + bin * binWidth;
      const start = Math.min(trials + 1, Math.max(0, Math.ceil(edge * mean)));
      expected[bin] += count * countRangeProbability(previousStart, start - 1, trials, share);
      previousStart = start;
    }
    expected[bins + 1] += count * countRangeProbability(previousStart, trials, trials, share);
  }
  return {
    low,
    high,
    bins,
    observed,
    expected,
    predictedRequests: trials,
    groupedShares: classes.length < distinctShares(shares, m),
  };
}

function binOf(relative: number, low: number, high: number, width: number, bins: number): number {
  if (relative < low) return 0;
  if (relative >= high) return bins + 1;
  return Math.min(bins, 1 + Math.floor((relative - low) / width));
}

/** P(from <= X <= to), X ~ Binomial(trials, share), from the smaller tails. */
function countRangeProbability(from: number, to: number, trials: number, share: number): number {
  if (to < from) return 0;
  const mean = trials * share;
  if (to < mean) {
    return Math.max(
      0,
      Math.exp(logBinomialAtMost(to, trials, share)) -
        Math.exp(logBinomialAtMost(from - 1, trials, share)),
    );
  }
  if (from > mean) {
    return Math.max(
      0,
      Math.exp(logBinomialAtLeast(from, trials, share)) -
        Math.exp(logBinomialAtLeast(to + 1, trials, share)),
    );
  }
  const outside =
    Math.exp(logBinomialAtMost(from - 1, trials, share)) +
    Math.exp(logBinomialAtLeast(to + 1, trials, share));
  return Math.max(0, 1 - outside);
}

function normalisedShares(shares: ArrayLike<number> | null, m: number): Float64Array | null {
  if (shares === null) return null;
  if (shares.length < m) throw new RangeError(`expected ${m} shares, got ${shares.length}`);
  let sum = 0;
  let equal = true;
  for (let shard = 0; shard < m; shard++) {
    sum += shares[shard];
    if (shares[shard] !== shares[0]) equal = false;
  }
  if (equal || !(sum > 0)) return null;
  const out = new Float64Array(m);
  for (let shard = 0; shard < m; shard++) out[shard] = shares[shard] / sum;
  return out;
}

function distinctShares(shares: Float64Array | null, m: number): number {
  return shares === null ? 1 : new Set(shares.subarray(0, m)).size;
}

function shareClassesOf(
  shares: Float64Array | null,
  m: number,
): { share: number; count: number }[] {
  if (shares === null) return [{ share: 1 / m, count: m }];
  const sorted = Float64Array.from(shares).sort();
  const classes: { share: number; count: number }[] = [];
  let start = 0;
  for (let i = 1; i <= m; i++) {
    if (i === m || sorted[i] !== sorted[start]) {
      classes.push({ share: sorted[start], count: i - start });
      start = i;
    }
  }
  if (classes.length <= mostShareClasses) return classes;
  const grouped: { share: number; count: number }[] = [];
  for (let group = 0; group < mostShareClasses; group++) {
    const from = Math.floor((group * m) / mostShareClasses);
    const to = Math.floor(((group + 1) * m) / mostShareClasses);
    if (to <= from) continue;
    let sum = 0;
    for (let i = from; i < to; i++) sum += sorted[i];
    grouped.push({ share: sum / (to - from), count: to - from });
  }
  return grouped;
}
