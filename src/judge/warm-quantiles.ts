import type { ChanceCache } from '../chance/chance-cache.js';
import type { Placement } from '../chance/placement.js';
import { emptiestTail, fullestTail } from '../chance/shard-extremes.js';

/**
 * The chance ceiling and floor for equal shares, searched from a guess. The chance
 * engine's fullestQuantile and emptiestQuantile search whole counts from the fair share
 * outward (about log2 of the range in tail evaluations, each up to a millisecond at
 * m = 1e4); consecutive windows have nearly the same total, so the previous window's answer
 * shifted by the change in fair share is usually within a count or two, and two or three
 * evaluations settle it. Same predicate, same answer: the result equals the engine's to the
 * last bit (tested), only the search path differs. Equal shares only; the judge asks the
 * engine directly for weighted shares.
 */

/**
 * The chance ceiling as a whole count: the smallest k with P(max >= k + 1) <= alpha, in
 * relative load k / fair share, as fullestQuantile(placement, 1 - alpha) returns it.
 * `guess` is a count near the answer (NaN: none). O(log |answer - guess|) tails, asked with
 * `cache` (the memo's; without one, the engine's default).
 * @example warmCeiling(makePlacement(64_000, 64), 0.001, 1130) // 1133 / 1000
 */
export function warmCeiling(
  placement: Placement,
  alpha: number,
  guess: number,
  cache?: ChanceCache,
): number {
  const total = placement.total;
  const fair = total / placement.shardCount;
  const level = 1 - alpha;
  // The engine's predicate, written the same way so that rounding agrees.
  const exceeds = (count: number) =>
    Math.exp(fullestTail(placement, (count + 1) / fair, { cache }).logProbability) > 1 - level;
  // Below the mean no count can be the ceiling: the fullest shard always reaches it.
  const least = Math.ceil(fair) - 1;
  const start = Number.isFinite(guess)
    ? Math.max(least + 1, Math.min(total, Math.round(guess)))
    : least + 1;
  return gallopThenBisect(exceeds, least, total, start, true) / fair;
}

/**
 * The chance floor as a whole count: the smallest k with P(min <= k) >= alpha, in relative
 * load k / fair share, as emptiestQuantile(placement, alpha) returns it (0 when even an
 * empty shard is that likely). `guess` is a count near the answer (NaN: none); `cache` as
 * for warmCeiling.
 * @example warmFloor(makePlacement(64_000, 64), 0.001, 870) // 872 / 1000
 */
export function warmFloor(
  placement: Placement,
  alpha: number,
  guess: number,
  cache?: ChanceCache,
): number {
  const fair = placement.total / placement.shardCount;
  const below = (count: number) =>
    Math.exp(emptiestTail(placement, count / fair, { cache }).logProbability) < alpha;
  if (!below(0)) return 0;
  // The emptiest shard never holds more than the fair share: the engine takes floor(fair)
  // as the upper end without testing it, and so does this search.
  const most = Math.floor(fair);
  const start = Number.isFinite(guess) ? Math.max(1, Math.min(most, Math.round(guess))) : most;
  return gallopThenBisect(below, 0, most, start, false) / fair;
}

/**
 * The one search of both: the least whole count above `lowest` at which `holds` fails, for
 * a `holds` that is true up to some count and false from there on. From `start` it gallops
 * (steps 1, 2, 4, ...) up while `holds` and down while not, then bisects the bracket found.
 * `lowest` is taken to hold and never asked. `highest` is the answer when nothing below it
 * fails; it is asked (as the last step up, or as `start`) only when `askHighest`, and when it
 * then holds, it is the answer too. O(log |answer - start|) calls of `holds`.
 */
function gallopThenBisect(
  holds: (count: number) => boolean,
  lowest: number,
  highest: number,
  start: number,
  askHighest: boolean,
): number {
  let low = lowest;
  let high = highest;
  if (start < highest || askHighest) {
    if (holds(start)) {
      low = start;
      for (let width = 1; ; width *= 2) {
        let next = low + width;
        if (next >= highest) {
          if (!askHighest) break;
          next = highest;
        }
        if (!holds(next)) {
          high = next;
          break;
        }
        low = next;
        if (low === highest) return highest;
      }
    } else {
      high = start;
      for (let width = 1; high - width > lowest; width *= 2) {
        const next = high - width;
        if (holds(next)) {
          low = next;
          break;
        }
        high = next;
      }
    }
  }
  while (high - low > 1) {
    const mid = Math.floor((low + high) / 2);
    if (holds(mid)) low = mid;
    else high = mid;
  }
  return high;
}
