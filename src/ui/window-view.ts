import type { Judgement } from '../judge/judgement.js';
import { loadHistogram, loadHistogramRange } from '../judge/spread-histogram.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import { shardCandidates, sharesMatchVerdict, sharesOfNull } from '../judge/shard-candidates.js';
import { type WindowView, fineBins, candidateRows } from './view-common.js';

/* One judged window, prepared for the screen when it closes (see buildWindowView). */

/**
 * Prepares one judged window for the screen: the spread histogram with its prediction and
 * the shards worth a row, both computed by the judge's side (src/judge/). Called once per
 * window (O(m) plus the histogram's tails).
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
  const used = sharesOfNull(judgement, shares);
  const base = {
    judgement,
    startMs: window.start,
    endMs: window.end,
    sharesMatchVerdict: sharesMatchVerdict(judgement),
  };
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
    candidates: shardCandidates(window, judgement, shares, idAt, candidateRows),
  };
}
