import type { Placement } from '../chance/placement.js';
import { probabilityFromLog } from '../chance/log-space.js';
import { logBinomialAtLeast, logBinomialAtMost } from '../chance/tails.js';
import type { ShardUniverse } from '../window/shard-universe.js';
import type { ChanceMemo } from './chance-memo.js';
import { trackingKey } from './incident-tracker.js';
import type { FlaggedShard } from './judgement.js';
import { shareAt } from './window-placement.js';

/**
 * The flagged list: adjusted p-values for the strongest candidates of each side (at most
 * --max-flagged each, so the cost is bounded however many shards exceed the ceiling),
 * most significant first, at most --max-flagged in all. Hot and cold are the candidates
 * (beyond the chance ceiling or floor); placement holds the judged (possibly divided) total.
 */
export function flagShards(
  memo: ChanceMemo,
  universe: ShardUniverse,
  maxFlagged: number,
  hot: number[],
  cold: number[],
  placement: Placement,
  version: string,
  judgedCounts: ArrayLike<number>,
  counts: ArrayLike<number>,
  n: number,
  shares: Float64Array | null,
  streaks: ReadonlyMap<number, number>,
): FlaggedShard[] {
  const m = counts.length;
  const judgedTotal = placement.total;
  const judgedLoad = (shard: number) =>
    judgedCounts[shard] / (judgedTotal * shareAt(shares, shard, m));
  const entries: (FlaggedShard & { logP: number })[] = [];
  // Hot shards against the fullest-shard law, cold ones against the emptiest-shard law;
  // the plain binomial tail goes beside, never used alone.
  const sides = [
    { finding: 'hotspot', shards: hot, hotter: true },
    { finding: 'cold', shards: cold, hotter: false },
  ] as const;
  for (const side of sides) {
    const strongest = [...side.shards]
      .sort(
        (a, b) =>
          (side.hotter ? judgedLoad(b) - judgedLoad(a) : judgedLoad(a) - judgedLoad(b)) || a - b,
      )
      .slice(0, maxFlagged);
    for (const shard of strongest) {
      const relative = judgedLoad(shard);
      const logP = (
        side.hotter
          ? memo.fullestTail(placement, version, relative)
          : memo.emptiestTail(placement, version, relative)
      ).logProbability;
      const share = shareAt(shares, shard, m);
      const binomialLogP = side.hotter
        ? logBinomialAtLeast(judgedCounts[shard], judgedTotal, share)
        : logBinomialAtMost(judgedCounts[shard], judgedTotal, share);
      entries.push({
        shard: universe.idAt(shard),
        finding: side.finding,
        count: counts[shard],
        relative: counts[shard] / (n * share),
        p: probabilityFromLog(logP),
        binomialP: probabilityFromLog(binomialLogP),
        streak: streaks.get(trackingKey(shard, side.finding)) ?? 0,
        logP,
      });
    }
  }
  // Sorted on the log so that p-values below the 1e-300 reporting floor keep their order.
  entries.sort((a, b) => a.logP - b.logP);
  return entries.slice(0, maxFlagged).map(({ logP: _logP, ...entry }) => entry);
}
