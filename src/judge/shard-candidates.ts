import type { ClosedWindow } from '../window/event-time-window.js';
import type { Judgement } from './judgement.js';

/*
 * The shards of a judged window worth a row on the live screen, with their numbers: the judge
 * computes them (fair shares, the p-value bounds of unflagged shards, the highest and lowest
 * loads) so that the screen only formats and orders them. Pure; O(m) per window.
 */

/** A shard worth a row, with its numbers (not yet words). */
export interface ShardCandidate {
  /** The id as it came from the wire: escaped only when a row is built. */
  readonly shard: string;
  readonly count: number;
  /** N p_i in requests; null when the shares are not known here (learned baseline). */
  readonly fairShare: number | null;
  readonly relative: number;
  /** Adjusted p: exact for flagged, fullest and emptiest shards, else a bound (see pBound). */
  readonly p: number | null;
  /** '' when p is exact; `≥` when the adjusted p is at least p; `>` when it is above p (alpha). */
  readonly pBound: '' | '≥' | '>';
  readonly finding: 'hotspot' | 'cold' | null;
  readonly streak: number;
  /** An incident is open on this shard with its finding. */
  readonly incident: boolean;
}

/** Shard ids in reading order: `seat-2` before `seat-10`. */
const idCollator = new Intl.Collator('en', { numeric: true });
export function compareIds(a: string, b: string): number {
  return idCollator.compare(a, b);
}

/** The shares the window was judged against: none (equal shares) under the uniform null. */
export function sharesOfNull(
  judgement: Judgement,
  shares: ArrayLike<number> | null,
): ArrayLike<number> | null {
  return judgement.null === 'uniform' ? null : shares;
}

/**
 * False under a ready learned baseline: the verdict rested on learned shares this side does not
 * have, so loads relative to the declared shares are not the verdict's.
 */
export function sharesMatchVerdict(judgement: Judgement): boolean {
  return !(judgement.null === 'baseline' && judgement.baseline?.ready === true);
}

/**
 * The shards of a judged window worth a row, unordered: the flagged ones, the fullest and the
 * emptiest (with their exact adjusted p), and, when the shares match the verdict, the `rows`
 * highest and lowest relative loads and the `rows` first ids in reading order (with what is
 * known of their adjusted p, see {@link unflaggedP}). None for a window without requests.
 *
 * @param shares the declared shares (null for equal shares); the uniform null ignores them
 * @param idAt the shard id at an index of the window's counts
 * @param rows how many of the highest, lowest and first shards to keep
 */
export function shardCandidates(
  window: Pick<ClosedWindow, 'counts' | 'total'>,
  judgement: Judgement,
  shares: ArrayLike<number> | null,
  idAt: (index: number) => string,
  rows: number,
): ShardCandidate[] {
  const counts = window.counts;
  const m = counts.length;
  const n = window.total;
  if (judgement.fullest === null || m === 0 || n === 0) return [];
  const used = sharesOfNull(judgement, shares);
  let shareSum = 0;
  if (used !== null) for (let shard = 0; shard < m; shard++) shareSum += used[shard];
  const fairOf = (shard: number) =>
    used === null || !(shareSum > 0) ? n / m : (n * used[shard]) / shareSum;
  const open = new Set(
    judgement.incidents.map((incident) => `${incident.finding} ${incident.shard}`),
  );
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
  for (const extreme of [judgement.fullest, judgement.emptiest]) {
    if (extreme === null || byId.has(extreme.shard)) continue;
    byId.set(extreme.shard, {
      shard: extreme.shard,
      count: extreme.count,
      fairShare: null,
      relative: extreme.relative,
      p: extreme.p,
      pBound: '',
      finding: null,
      streak: 0,
      incident: false,
    });
  }
  if (sharesMatchVerdict(judgement)) {
    // The highest and lowest relative loads and the first ids, by one pass keeping three
    // short sorted lists: every sort of the table chooses its rows from all shards.
    const high: { shard: number; relative: number }[] = [];
    const low: { shard: number; relative: number }[] = [];
    const first: { shard: number; id: string }[] = [];
    for (let shard = 0; shard < m; shard++) {
      const relative = counts[shard] / fairOf(shard);
      keepBest(high, { shard, relative }, rows, (a, b) => b.relative - a.relative);
      keepBest(low, { shard, relative }, rows, (a, b) => a.relative - b.relative);
      keepBest(first, { shard, id: idAt(shard) }, rows, (a, b) => compareIds(a.id, b.id));
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
export function unflaggedP(relative: number, j: Judgement): Pick<ShardCandidate, 'p' | 'pBound'> {
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
