import { roundingSlack } from '../placement.js';
import { rankTail, type TailAccumulator, type TailState } from './accumulators.js';
import { prepare, TableLookup } from './coefficient-table.js';
import { PRUNE_EXACT, type ShareSweep, type Side, type SweepQuery } from './sorted-shares.js';
import { walk } from './walk.js';

/** What a binomial sweep returns: the first Bonferroni sum and what its pair estimate needs. */
export interface TailSums {
  /** log sum_i P(X_i reaches its threshold). */
  readonly logSum: number;
  /** log sum_i P(...)^2. */
  readonly logSumSquares: number;
  /** The two shards with the largest tails: share, threshold and log tail. */
  readonly top: readonly { share: number; threshold: number; logTail: number }[];
  /** Some shard reaches its threshold surely. */
  readonly certain: boolean;
}

/**
 * Binomial sweep: the first Bonferroni sum S1 = sum_i P(X_i reaches its threshold) and what
 * the pair estimate of S2 needs, X_i ~ Binomial(N, p_i). Null when the sweep cannot be
 * trusted (the grouped engine then answers). O(nodes + m); on a table kept from the
 * previous accurate sweep, O(m) threshold comparisons plus a table lookup per moved shard.
 * The state of an accurate sweep is kept on the sweep (`kept`, beside its table).
 */
export function sweepTails(
  side: Side,
  sweep: ShareSweep,
  relative: number,
  margin = PRUNE_EXACT,
): TailSums | null {
  const acc: TailAccumulator = {
    reference: 0,
    sum: 0,
    squares: 0,
    first: -1,
    firstTail: -1,
    firstK: 0,
    second: -1,
    secondTail: -1,
    secondK: 0,
  };
  const query: SweepQuery = { side, law: { kind: 'binomial' }, sweep, relative };
  const accurate = margin >= PRUNE_EXACT && !(side === 'low' && relative === 0);
  const co = accurate ? prepare(query, true) : null;
  const keptWork = sweep.kept[side];
  const kept = keptWork.tails;
  if (co !== null && kept !== undefined && kept.co === co) {
    updateTails(query, kept, acc);
  } else {
    let store: TailState | null = null;
    if (co !== null && co === keptWork.table) {
      // The arrays of the state it replaces are reused (two per side and sweep).
      const previous = kept;
      const m = sweep.shares.length;
      store = {
        co,
        count: 0,
        threshold: previous?.threshold ?? new Float64Array(m),
        tail: previous?.tail ?? new Float64Array(m),
        sum: 0,
        squares: 0,
      };
    }
    const count = walk(query, margin, acc, null, co, store);
    if (count === null) return null;
    if (store) {
      store.sum = acc.sum;
      store.squares = acc.squares;
      keptWork.tails = store;
    }
  }
  if (!Number.isFinite(acc.sum) || acc.first < 0) return null;
  const shard = (i: number, k: number, tail: number) => ({
    share: sweep.shares[i],
    threshold: k,
    logTail: acc.reference + Math.log(tail),
  });
  const first = shard(acc.first, acc.firstK, acc.firstTail);
  const second = acc.second < 0 ? first : shard(acc.second, acc.secondK, acc.secondTail);
  return {
    logSum: acc.reference + Math.log(acc.sum),
    logSumSquares: 2 * acc.reference + Math.log(acc.squares),
    top: [first, second],
    certain: first.logTail >= 0,
  };
}

/**
 * The kept sweep moved to a new load on the same table: each shard whose threshold changed
 * gets its tail from the table (positions measured at the table's load), the sums change by
 * the differences, and the two largest tails are found again. The shards pruned by the kept
 * sweep stay out (their tails were below e^-40 of the largest and move by a few percent).
 */
function updateTails(query: SweepQuery, kept: TailState, acc: TailAccumulator): void {
  const { side, sweep, relative } = query;
  const { co, threshold, tail } = kept;
  const shares = sweep.shares;
  const total = sweep.total;
  const high = side === 'high';
  let sum = kept.sum;
  let squares = kept.squares;
  const lookup = new TableLookup(co, side);
  for (let i = 0; i < kept.count; i++) {
    const x = relative * (total * shares[i]);
    const k = high ? Math.ceil(x - roundingSlack(x)) : Math.floor(x + roundingSlack(x));
    if (k === threshold[i]) continue;
    const value = lookup.binomialTail(k, shares[i], total);
    sum += value - tail[i];
    squares += value * value - tail[i] * tail[i];
    tail[i] = value;
    threshold[i] = k;
  }
  kept.sum = sum;
  kept.squares = squares;
  acc.reference = co.peak;
  acc.sum = sum;
  acc.squares = squares;
  // The two largest tails, in one tight pass.
  let first = -1;
  let firstTail = -1;
  let second = -1;
  let secondTail = -1;
  for (let i = 0; i < kept.count; i++) {
    const value = tail[i];
    if (value > secondTail) {
      if (value > firstTail) {
        second = first;
        secondTail = firstTail;
        first = i;
        firstTail = value;
      } else {
        second = i;
        secondTail = value;
      }
    }
  }
  for (const i of [second, first]) if (i >= 0) rankTail(acc, i, threshold[i], tail[i]);
}
