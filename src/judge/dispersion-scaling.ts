import { quickselect } from 'simple-statistics';
import { CHI_SQUARE_ONE_MEDIAN } from '../chance/spread.js';

/**
 * Counts scaled to an effective number of independent placements, and the robust spread
 * estimate that sets the scale in the robust spread mode.
 *
 * When counts are over-dispersed by a factor phi (each "placement" really moves about phi
 * requests together, as repeated keys do), x_i / phi behaves like a multinomial count of
 * N / phi placements: its variance N p_i phi / phi^2 = (N / phi) p_i is the multinomial
 * one. So judging x / phi against the shares tests whether a shard stands out from the
 * general spread rather than from ideal random placement.
 */

/**
 * Scales counts by `scale` (0 < scale <= 1) into `out` and returns their total.
 * Rounding rule: y_i = 0 when x_i = 0, else max(1, round(x_i x scale)), and the scaled
 * total is the sum of the y_i. Whole counts are what the chance engine's tests are defined
 * on; keeping every non-empty shard non-empty leaves the empty shards exactly the observed
 * ones, so scaling can never manufacture a dead shard. O(m).
 *
 * @example scaleCounts([0, 1, 10], 0.25, out) // out = [0, 1, 3], returns 4
 */
export function scaleCounts(counts: ArrayLike<number>, scale: number, out: Float64Array): number {
  let total = 0;
  for (let shard = 0; shard < counts.length; shard++) {
    const count = counts[shard];
    const scaled = count === 0 ? 0 : Math.max(1, Math.round(count * scale));
    out[shard] = scaled;
    total += scaled;
  }
  return total;
}

/**
 * Robust dispersion: the median squared Pearson residual (x_i - N p_i)^2 / (N p_i),
 * divided by the median of a chi-square with one degree of freedom, so it is about 1 under
 * random placement and a few hot shards cannot move it. The same statistic as the chance
 * engine's robustDispersion (spread.ts); this one finds the median by selection, O(m)
 * instead of a sort, because the judge runs it on every window and the sort dominated a
 * window's cost at m = 1e4. Shards with zero expected load are skipped; no shards: 1.
 * The selection is simple-statistics' quickselect; the median of an even count is the mean
 * (a + b) / 2 of the two middle values, kept as robustDispersion computes it rather than
 * simple-statistics' median, whose R type 7 interpolation a + (b - a) / 2 differs from it
 * in the last bit for about one pair in ten (and which copies the array per call).
 * `scratch` must hold m numbers.
 *
 * Known bias, stated: with under about 2 requests per shard the residuals are few distinct
 * values and the median sits on one of them (at N = m it is 1 / 0.4549 = 2.2 under random
 * placement). The judge floors phi at 1 and uses it only to widen, never to narrow, so the
 * bias costs power, not false findings.
 *
 * @example robustSpread([10, 10, 10, 10], 40, null, scratch) // 0 (every residual is 0)
 */
export function robustSpread(
  counts: ArrayLike<number>,
  total: number,
  shares: Float64Array | null,
  scratch: Float64Array,
): number {
  const m = counts.length;
  let used = 0;
  for (let shard = 0; shard < m; shard++) {
    const expected = total * (shares === null ? 1 / m : shares[shard]);
    if (expected <= 0) continue;
    const d = counts[shard] - expected;
    scratch[used++] = (d * d) / expected;
  }
  if (used === 0) return 1;
  const middle = used >> 1;
  const upper = select(scratch, used, middle);
  if (used % 2 === 1) return upper / CHI_SQUARE_ONE_MEDIAN;
  // After selecting position `middle`, everything before it is no larger: its maximum is
  // the lower middle value.
  let lower = -Infinity;
  for (let i = 0; i < middle; i++) if (scratch[i] > lower) lower = scratch[i];
  return (lower + upper) / 2 / CHI_SQUARE_ONE_MEDIAN;
}

/**
 * The k-th smallest of values[0..length) (0-based), rearranging them so that positions
 * before k hold no larger values: simple-statistics' quickselect (Floyd and Rivest,
 * "Algorithm 489: SELECT", CACM 18(3), 1975), which works in place on the scratch array.
 * Expected O(length). Its `right` argument defaults when 0 (to the whole array's end, past
 * `length` in a scratch buffer), so one value is answered here without it.
 */
export function select(values: Float64Array, length: number, k: number): number {
  if (length > 1) quickselect(values as unknown as number[], k, 0, length - 1);
  return values[k];
}
