import type { Finding } from '../judge/judgement.js';
import type { KeyCauseName } from '../judge/key-verdict.js';
import type { ReviewWindow } from './review-window.js';

/** A finding that held in consecutive windows: per shard for hotspot and cold, else window-wide. */
export interface Episode {
  readonly finding: 'hotspot' | 'cold' | 'uneven' | 'too little traffic';
  /** The shard, for hotspot and cold; null for window-wide findings. */
  readonly shard: string | null;
  /** Start of the first window and end of the last, epoch ms. */
  readonly start: number;
  readonly end: number;
  readonly windows: number;
  /**
   * Peak relative load (1 = fair share): the highest for a hotspot, the lowest for a cold
   * shard, the fullest shard's highest for a window-wide finding.
   */
  readonly peakRelative: number;
  /** Start of the window with the peak. */
  readonly peakAt: number;
  /**
   * Requests above the shard's fair share, summed over the episode's windows (negative for a
   * cold shard: the requests it did not serve). Null for window-wide findings.
   */
  readonly aboveFairShare: number | null;
  /**
   * Requests above the chance ceiling (hotspot) or below the chance floor (cold, as a
   * negative number): the part of the skew random placement does not explain at alpha.
   * Null for window-wide findings, or when the floor was not tested.
   */
  readonly beyondChance: number | null;
  /** Smallest adjusted p-value in the episode (null for window-wide findings). */
  readonly leastP: number | null;
  /** Windows of the episode that also showed the failover pattern (cold and hotspot). */
  readonly failoverWindows: number;
  /**
   * What made the shard hot, from the keys of its requests (hot key, placement, moved): each
   * cause with the number of the episode's windows that gave it, most frequent first. Empty
   * when the records carried no keys, and for cold and window-wide episodes.
   */
  readonly causes: readonly { readonly cause: KeyCauseName; readonly windows: number }[];
  /** The key-cause sentence (with its numbers) of the episode's peak window, if any. */
  readonly peakCause: string | null;
}

interface OpenEpisode {
  finding: Episode['finding'];
  shard: string | null;
  start: number;
  end: number;
  windows: number;
  peakRelative: number;
  peakAt: number;
  aboveFairShare: number;
  beyondChance: number;
  beyondKnown: boolean;
  leastP: number;
  failoverWindows: number;
  seenAt: number;
  causes: Map<KeyCauseName, number>;
  peakCause: string | null;
}

const windowWide: readonly Finding[] = ['uneven', 'too little traffic'];

/**
 * Finds episodes in a stream of judged windows: a run of windows in which a shard is flagged
 * with the same finding (or a window-wide finding holds), bridging gaps of at most
 * `gapWindows` windows without it, so a hotspot near the edge of detection, flagged in most
 * windows but not all, reads as one episode and not as dozens. With the gap at --clear - 1
 * an episode ends exactly where an incident would clear. Start and end are those of the
 * first and last flagged window; `windows` counts the flagged ones. Windows must come in
 * start order. Only the shards a window flags are seen (at most --max-flagged per window,
 * most significant first). O(flagged + open episodes) per window.
 */
export class EpisodeFinder {
  private readonly gapWindows: number;
  private readonly open = new Map<string, OpenEpisode>();
  private readonly done: Episode[] = [];
  private idsSeen: readonly string[] | null = null;
  private indexById = new Map<string, number>();
  private windowIndex = 0;

  /** @param gapWindows most windows without the finding inside one episode (default 0) */
  constructor(gapWindows = 0) {
    this.gapWindows = gapWindows;
  }

  add(window: ReviewWindow): void {
    const judgement = window.judgement;
    const index = this.windowIndex++;
    const failover = judgement.pattern === 'failover';
    const m = window.counts.length;
    const causes = new Map((judgement.keys?.causes ?? []).map((c) => [c.shard, c]));
    for (const flagged of judgement.flagged) {
      const fair = this.fairShare(window, flagged.shard, m);
      const hot = flagged.finding === 'hotspot';
      const level = hot ? judgement.ceiling.relative : judgement.floor?.relative;
      const episode = this.touch(`${flagged.finding}|${flagged.shard}`, index, window, () => ({
        finding: flagged.finding,
        shard: flagged.shard,
        peakRelative: flagged.relative,
      }));
      const cause = hot ? causes.get(flagged.shard) : undefined;
      if (cause !== undefined)
        episode.causes.set(cause.cause, (episode.causes.get(cause.cause) ?? 0) + 1);
      const newPeak =
        episode.windows === 1 ||
        (hot ? flagged.relative > episode.peakRelative : flagged.relative < episode.peakRelative);
      if (newPeak) {
        episode.peakRelative = flagged.relative;
        episode.peakAt = window.start;
        episode.peakCause = cause?.summary ?? null;
      }
      episode.aboveFairShare += flagged.count - fair;
      if (level === undefined || level === null) episode.beyondKnown = false;
      else episode.beyondChance += flagged.count - level * fair;
      episode.leastP = Math.min(episode.leastP, flagged.p);
      if (failover) episode.failoverWindows++;
    }
    for (const finding of windowWide) {
      if (!judgement.findings.includes(finding)) continue;
      const relative = judgement.fullest?.relative ?? 0;
      const episode = this.touch(`${finding}|`, index, window, () => ({
        finding: finding as Episode['finding'],
        shard: null,
        peakRelative: relative,
      }));
      if (relative > episode.peakRelative) {
        episode.peakRelative = relative;
        episode.peakAt = window.start;
      }
    }
    for (const [key, episode] of this.open) {
      if (index - episode.seenAt > this.gapWindows) {
        this.open.delete(key);
        this.done.push(finished(episode));
      }
    }
  }

  /** Every episode, open ones closed at the last window, in start order (then shard). */
  episodes(): Episode[] {
    const all = [...this.done, ...[...this.open.values()].map(finished)];
    return all.sort(
      (a, b) =>
        a.start - b.start ||
        a.finding.localeCompare(b.finding) ||
        (a.shard ?? '').localeCompare(b.shard ?? ''),
    );
  }

  private touch(
    key: string,
    index: number,
    window: ReviewWindow,
    first: () => Pick<OpenEpisode, 'finding' | 'shard' | 'peakRelative'>,
  ): OpenEpisode {
    let episode = this.open.get(key);
    if (episode === undefined) {
      episode = {
        ...first(),
        start: window.start,
        end: window.end,
        windows: 0,
        peakAt: window.start,
        aboveFairShare: 0,
        beyondChance: 0,
        beyondKnown: true,
        leastP: 1,
        failoverWindows: 0,
        seenAt: index,
        causes: new Map(),
        peakCause: null,
      };
      this.open.set(key, episode);
    }
    episode.windows++;
    episode.end = window.end;
    episode.seenAt = index;
    return episode;
  }

  /** N p_i: the shard's fair share of the window's requests. */
  private fairShare(window: ReviewWindow, shard: string, m: number): number {
    if (window.shares === null) return window.total / m;
    if (this.idsSeen !== window.shardIds) {
      this.idsSeen = window.shardIds;
      this.indexById = new Map(window.shardIds.map((id, at) => [id, at]));
    }
    const at = this.indexById.get(shard);
    if (at === undefined || at >= m) return window.total / m;
    let sum = 0;
    for (let i = 0; i < m; i++) sum += window.shares[i];
    return (window.total * window.shares[at]) / sum;
  }
}

function finished(episode: OpenEpisode): Episode {
  const perShard = episode.shard !== null;
  return {
    finding: episode.finding,
    shard: episode.shard,
    start: episode.start,
    end: episode.end,
    windows: episode.windows,
    peakRelative: episode.peakRelative,
    peakAt: episode.peakAt,
    aboveFairShare: perShard ? episode.aboveFairShare : null,
    beyondChance: perShard && episode.beyondKnown ? episode.beyondChance : null,
    leastP: perShard ? episode.leastP : null,
    failoverWindows: episode.failoverWindows,
    causes: [...episode.causes]
      .map(([cause, windows]) => ({ cause, windows }))
      .sort((a, b) => b.windows - a.windows || a.cause.localeCompare(b.cause)),
    peakCause: episode.peakCause,
  };
}
