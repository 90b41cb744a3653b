import { Judge } from '../judge/judge.js';
import type { JudgeSettings } from '../judge/judge-settings.js';
import type { RecordedWindow } from '../record/recording-reader.js';
import type { RejectionReason } from '../window/count-record.js';
import { UsageError } from '../errors/usage-error.js';
import { ShardUniverse } from '../window/shard-universe.js';
import type { ReviewWindow } from './review-window.js';

/** How to judge a recording's windows again. */
export interface RejudgeOptions {
  /** The settings to judge with (the recording's, with the review's options over them). */
  readonly settings: JudgeSettings;
  /**
   * Window length to judge, ms: the recording's, or a whole multiple of it (consecutive
   * recorded windows are merged). Null keeps the recording's.
   */
  readonly windowMs: number | null;
  /** As typed, for error messages. */
  readonly windowText?: string;
  /** Receives notes (a partial merged window at either end). */
  readonly onNote?: (note: string) => void;
}

/**
 * The windows of a recording judged afresh with other settings, through the same Judge as
 * `watch`, on the recorded count vectors. With a longer `windowMs` each run of recorded
 * windows inside one longer window (aligned, as watch aligns windows, to multiples of the
 * length since the epoch) is summed first. A recording keeps one count vector per window, so
 * windows can be merged into whole multiples, never cut or shifted; and a recording of
 * sliding windows (hop below the window) cannot be merged at all, since its windows overlap.
 * Both are refused with a UsageError naming --window.
 *
 * The universe is rebuilt from the recorded ids and shares (declared or growing, as
 * recorded). O(m) per recorded window plus one judgement per output window.
 */
export async function* rejudgeRecording(
  recorded: AsyncIterable<RecordedWindow>,
  options: RejudgeOptions,
): AsyncGenerator<ReviewWindow, void, undefined> {
  let universe: ShardUniverse | null = null;
  let judge: Judge | null = null;
  let windowMs = 0;
  let merging = false;
  let pending: {
    start: number;
    end: number;
    counts: Float64Array;
    total: number;
    late: number;
    rejected: Partial<Record<RejectionReason, number>>;
    parts: number;
    firstPart: number;
  } | null = null;
  let recordedMs = 0;
  let lastShares: Float64Array | null = null;
  /** A growing universe: the ids of the line last followed, and its indices in `universe`. */
  let growingIds: readonly string[] | null = null;
  let lineIndex: Int32Array | null = null;
  /** Ids the recording retired inside a merged window, to retire where the next one starts. */
  let retireDeferred = false;

  const flush = (): ReviewWindow | null => {
    if (pending === null || judge === null || universe === null) return null;
    const window = pending;
    pending = null;
    const expectedParts = windowMs / recordedMs;
    if (merging && window.parts < expectedParts) {
      options.onNote?.(
        `the window starting ${new Date(window.start).toISOString()} holds only ${window.parts} of its ${expectedParts} recorded windows (the recording starts or ends inside it, or skipped a quiet stretch)`,
      );
    }
    const counts = window.counts.subarray(0, universe.size);
    const judgement = judge.judge({
      start: window.start,
      end: window.end,
      counts,
      total: window.total,
      late: window.late,
      rejected: window.rejected,
    });
    return {
      start: window.start,
      end: window.end,
      counts,
      total: window.total,
      shardIds: universe.ids,
      shares: lastShares,
      judgement,
    };
  };

  for await (const window of recorded) {
    if (universe === null) {
      recordedMs = window.settings.windowMs;
      const hopMs = window.settings.hopMs ?? recordedMs;
      windowMs = options.windowMs ?? recordedMs;
      merging = windowMs !== recordedMs;
      if (merging) {
        const given = options.windowText ?? `${windowMs}ms`;
        if (hopMs !== recordedMs) {
          throw new UsageError(
            '--window',
            given,
            `cannot be used on this recording: its windows slide (${recordedMs} ms every ${hopMs} ms) and overlap, so they cannot be merged`,
          );
        }
        if (windowMs % recordedMs !== 0) {
          throw new UsageError(
            '--window',
            given,
            `is not a whole multiple of the recording's ${recordedMs} ms windows: a recording keeps one count vector per window, so windows can be merged into longer multiples but never cut`,
          );
        }
      }
      universe = universeOf(window);
      lastShares = window.shares;
      judge = new Judge(universe, { ...options.settings, hopMs: merging ? windowMs : hopMs });
    } else if (universe.declared) {
      grow(universe, window);
      if (window.shares !== null) lastShares = window.shares;
    }
    const start = merging ? Math.floor(window.start / windowMs) * windowMs : window.start;
    if (pending !== null && pending.start !== start) {
      const judged = flush();
      if (judged !== null) yield judged;
    }
    if (
      !universe.declared &&
      (window.shardIds !== growingIds || (pending === null && retireDeferred))
    ) {
      growingIds = window.shardIds;
      retireDeferred = followGrowing(universe, window, pending === null, merging);
      lineIndex = lineIndices(universe, window.shardIds);
    }
    if (pending === null) {
      pending = {
        start,
        end: merging ? start + windowMs : window.end,
        counts: new Float64Array(Math.max(universe.size, window.counts.length)),
        total: 0,
        late: 0,
        rejected: {},
        parts: 0,
        firstPart: window.start,
      };
    }
    if (pending.counts.length < universe.size) {
      const grown = new Float64Array(universe.size);
      grown.set(pending.counts);
      pending.counts = grown;
    }
    for (let shard = 0; shard < window.counts.length; shard++) {
      pending.counts[lineIndex === null ? shard : lineIndex[shard]] += window.counts[shard];
    }
    pending.total += window.total;
    pending.late += window.judgement.late ?? 0;
    for (const [reason, count] of Object.entries(window.judgement.rejected ?? {})) {
      const key = reason as RejectionReason;
      pending.rejected[key] = (pending.rejected[key] ?? 0) + (count ?? 0);
    }
    pending.parts++;
  }
  const last = flush();
  if (last !== null) yield last;
}

function universeOf(window: RecordedWindow): ShardUniverse {
  const ids = window.shardIds;
  if (window.settings.declaredUniverse === false) {
    // The recording already kept within its run's --max-shards; merged windows may hold the
    // ids of several recorded ones at once, so no cap here.
    return ShardUniverse.growing({ maxShards: Number.MAX_SAFE_INTEGER });
  }
  const options = { maxShards: Math.max(ids.length, 1) };
  return window.shares === null
    ? ShardUniverse.fromIds(ids, options, '--recording', 'its shard ids')
    : ShardUniverse.fromWeights(ids, Array.from(window.shares), options);
}

/**
 * A growing universe follows a line that carries new ids: where the line starts a judged
 * window (`atBoundary`), ids the line no longer lists retire first, as they did in the
 * recording run at that boundary, so the judge's state follows them the same way; inside a
 * merged window they stay until it is judged (their load is in it). Then the line's new ids
 * are admitted. Judged window by window the universe must then list exactly the line's
 * ids: survivors keep their order and new ids come last, so anything else is another
 * run's recording. Returns true when ids the line no longer lists stay for now.
 */
function followGrowing(
  universe: ShardUniverse,
  window: RecordedWindow,
  atBoundary: boolean,
  merging: boolean,
): boolean {
  const listed = new Set(window.shardIds);
  const deferred = !atBoundary && universe.ids.some((id) => !listed.has(id));
  if (atBoundary) universe.retire((index) => listed.has(universe.idAt(index)));
  for (const id of window.shardIds) universe.admit(id);
  if (merging) return deferred;
  const ids = universe.ids;
  const at = ids.findIndex((id, index) => id !== window.shardIds[index]);
  if (at >= 0 || ids.length !== window.shardIds.length) {
    throw new Error(
      `the shard ids change at line ${window.line} (shard ${at} was ${JSON.stringify(ids[at])}, now ${JSON.stringify(window.shardIds[at])}): review one run's recording at a time`,
    );
  }
  return deferred;
}

/** Index in `universe` of each of a line's ids. O(ids). */
function lineIndices(universe: ShardUniverse, ids: readonly string[]): Int32Array {
  return Int32Array.from(ids, (id) => universe.indexOf(id));
}

/** Admits ids a declared universe gained; any other change means another run's recording. */
function grow(universe: ShardUniverse, window: RecordedWindow): void {
  const ids = window.shardIds;
  for (let at = 0; at < ids.length; at++) {
    if (at < universe.size) {
      if (universe.idAt(at) !== ids[at]) {
        throw new Error(
          `the shard ids change at line ${window.line} (shard ${at} was ${JSON.stringify(universe.idAt(at))}, now ${JSON.stringify(ids[at])}): review one run's recording at a time`,
        );
      }
    } else if (universe.declared || universe.admit(ids[at]) < 0) {
      throw new Error(
        `the shard universe changes at line ${window.line}: review one run's recording at a time`,
      );
    }
  }
}
