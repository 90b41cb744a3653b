import type { Judgement } from '../judge/judgement.js';
import { loadHistogram, loadHistogramRange } from '../judge/spread-histogram.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import {
  type ShardCandidate,
  type WindowView,
  fineBins,
  candidateRows,
  compareIds,
} from './view-common.js';

/* One judged window, prepared for the screen when it closes (see buildWindowView). */

/**
 * Prepares one judged window for the screen: the spread histogram with its prediction and
 * the shards worth a row. Called once per window (O(m) plus the histogram's tails).
 *
 * @param shares the declared shares (null for equal shares); the uniform null ignores them
 * @param idAt the shard id at an index of the window's counts
 */
export function buildWindowView(
  window: ClosedWindow,
  judgement: Judgement,
  shares: ArrayLike<number> | null,
  idAt: (index: number) => string,
): WindowView {
  const m = window.counts.length;
  const used = judgement.null === 'uniform' ? null : shares;
  const sharesMatchVerdict = !(judgement.null === 'baseline' && judgement.baseline?.ready === true);
  const base = { judgement, startMs: window.start, endMs: window.end, sharesMatchVerdict };
  if (judgement.fullest === null || m === 0 || window.total === 0) {
    return { ...base, histogram: null, candidates: [] };
  }
  const range = loadHistogramRange(judgement.ceiling.relative, judgement.floor?.relative ?? null);
  const histogram = loadHistogram({
    counts: window.counts,
    total: window.total,
    judgedTotal: judgement.judgedRequests,
    shares: used,
    low: range.low,
    high: range.high,
    bins: fineBins,
  });
  return {
    ...base,
    histogram,
    candidates: candidatesOf(window, judgement, used, idAt, sharesMatchVerdict),
  };
}

function candidatesOf(
  window: ClosedWindow,
  judgement: Judgement,
  shares: ArrayLike<number> | null,
  idAt: (index: number) => string,
  sharesMatchVerdict: boolean,
): ShardCandidate[] {
  const counts = window.counts;
  const m = counts.length;
  const n = window.total;
  let shareSum = 0;
  if (shares !== null) for (let shard = 0; shard < m; shard++) shareSum += shares[shard];
  const fairOf = (shard: number) =>
    shares === null || !(shareSum > 0) ? n / m : (n * shares[shard]) / shareSum;
  const open = new Set(
    judgement.incidents.map((incident) => `${incident.finding} ${incident.shard}`),
  );
  const fullestP = judgement.fullest?.p ?? null;
  const emptiestP = judgement.emptiest?.p ?? null;
  const byId = new Map<string, ShardCandidate>();
  const indexOf = new Map<string, number>();

  for (const flagged of judgement.flagged) {
    byId.set(flagged.shard, {
      shard: flagged.shard,
      count: flagged.count,
      fairShare: null,
      relative: flagged.relative,
      p: flagged.p,
      pBound: '',
      finding: flagged.finding,
      streak: flagged.streak,
      incident: open.has(`${flagged.finding} ${flagged.shard}`),
    });
  }
  for (const [extreme, p] of [
    [judgement.fullest, fullestP],
    [judgement.emptiest, emptiestP],
  ] as const) {
    if (extreme === null || byId.has(extreme.shard)) continue;
    byId.set(extreme.shard, {
      shard: extreme.shard,
      count: extreme.count,
      fairShare: null,
      relative: extreme.relative,
      p,
      pBound: '',
      finding: null,
      streak: 0,
      incident: false,
    });
  }
  if (sharesMatchVerdict) {
    // The highest and lowest relative loads and the first ids, by one pass keeping three
    // short sorted lists: every sort of the table chooses its rows from all shards.
    const high: { shard: number; relative: number }[] = [];
    const low: { shard: number; relative: number }[] = [];
    const first: { shard: number; id: string }[] = [];
    for (let shard = 0; shard < m; shard++) {
      const relative = counts[shard] / fairOf(shard);
      keepBest(high, { shard, relative }, candidateRows, (a, b) => b.relative - a.relative);
      keepBest(low, { shard, relative }, candidateRows, (a, b) => a.relative - b.relative);
      keepBest(first, { shard, id: idAt(shard) }, candidateRows, (a, b) => compareIds(a.id, b.id));
    }
    for (const { shard } of [...high, ...low, ...first]) {
      const id = idAt(shard);
      indexOf.set(id, shard);
      if (byId.has(id)) continue;
      const relative = counts[shard] / fairOf(shard);
      byId.set(id, {
        shard: id,
        count: counts[shard],
        fairShare: null,
        relative,
        ...unflaggedP(relative, judgement),
        finding: null,
        streak: 0,
        incident: false,
      });
    }
  }
  return [...byId.values()].map((candidate) => {
    const index = indexOf.get(candidate.shard);
    const fairShare =
      index !== undefined
        ? fairOf(index)
        : candidate.relative > 0
          ? candidate.count / candidate.relative
          : judgement.ceiling.requests === null
            ? null
            : n / m;
    return { ...candidate, fairShare };
  });
}

/**
 * What is known of the adjusted p of a shard that is neither flagged nor an extreme. On the
 * hot side it is P(max r >= r_i), at least the fullest's p (a lower load); on the cold side
 * at least the emptiest's. And a load below the chance ceiling, the (1 - alpha) quantile of
 * the fullest's, has P(max r >= r_i) > alpha (above the floor, P(min r <= r_i) > alpha). The
 * stronger of the two is shown: `≥0.207` from an extreme within chance, else `>0.001` for a
 * shard within chance, so a healthy shard never borrows an overwhelming p from a hotspot.
 */
function unflaggedP(relative: number, j: Judgement): Pick<ShardCandidate, 'p' | 'pBound'> {
  const hotSide = relative >= 1;
  const extremeP = hotSide ? (j.fullest?.p ?? null) : j.coldTests ? (j.emptiest?.p ?? null) : null;
  const level = hotSide ? j.ceiling.relative : (j.floor?.relative ?? null);
  const withinChance = level !== null && (hotSide ? relative < level : relative > level);
  // A bound at the engine's reporting floor says nothing.
  const usefulExtreme = extremeP !== null && extremeP > 1e-300 ? extremeP : null;
  if (usefulExtreme !== null && (usefulExtreme > j.alpha || !withinChance)) {
    return { p: usefulExtreme, pBound: '≥' };
  }
  if (withinChance) return { p: j.alpha, pBound: '>' };
  return { p: null, pBound: '' };
}

function keepBest<T>(list: T[], item: T, size: number, order: (a: T, b: T) => number): void {
  if (list.length === size && order(item, list[list.length - 1]) >= 0) return;
  let at = list.length;
  while (at > 0 && order(item, list[at - 1]) < 0) at--;
  list.splice(at, 0, item);
  if (list.length > size) list.pop();
}
