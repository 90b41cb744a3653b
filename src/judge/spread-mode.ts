import type { JudgeSettings } from './judge-settings.js';
import type { SpreadEstimate } from './pooled-spread.js';

/**
 * Fewest shards for which auto turns robust. The robust spread is a median of squared
 * residuals; with few shards the excess of one shard depresses all the others visibly
 * (each by 1/m of it), so every residual is large and the median reads one hotspot as a
 * general spread (with 2 shards both residuals are always equal). From 16 shards one
 * shard's excess moves the others by at most 1/16 of it. Our choice, stated.
 */
export const leastShardsForRobust = 16;
/**
 * The learned spread (pooled-spread.ts): span of its exponential weights, in windows, and
 * the windows learned before it replaces random placement as the yardstick of "uneven".
 * Our choices, stated: 60 windows (10 minutes of 10 s windows) pools 60 x m residuals;
 * 10 windows are enough for the t widening to be modest (see docs/calibration.md).
 */
export const spreadSpanWindows = 60;
export const spreadReadyWindows = 10;

/** The spreadReason of a verdict: which spread mode judged the window, and why. */
export function describeSpreadMode(
  m: number,
  s: JudgeSettings,
  robust: boolean,
  spreadRejects: boolean,
  spreadP: number,
  phi: number,
  learned: SpreadEstimate | null,
  robustPhi: number,
  dispersion: number,
): string {
  const learnedText =
    learned === null
      ? ''
      : `learned phi ${round(learned.phi)} over ${learned.windows} windows, upper 95% bound ${round(learned.upper)}`;
  const scaled =
    dispersion > 1
      ? `counts divided by ${round(dispersion)}${robust ? ` (${learnedText}${dispersion === robustPhi ? `; this window is beyond it, so its own robust phi ${round(robustPhi)}` : ', matched on the tail of clumped counts'})` : " for the learned baseline's own uncertainty"}`
      : robust
        ? `${learnedText} is at most 1, so counts are judged as they are`
        : 'counts judged as they are';
  if (s.spread !== 'auto') return `--spread ${s.spread}: ${scaled}`;
  if (spreadRejects && m < leastShardsForRobust) {
    return `auto: the spread test rejects (p ${spreadP.toPrecision(3)} <= alpha ${s.alpha}, phi ${round(phi)}) but ${m} shards are too few for a robust spread (${leastShardsForRobust} needed); ${scaled}`;
  }
  if (!spreadRejects && robust) {
    return `auto: the spread test does not reject (p ${spreadP.toPrecision(3)} > alpha ${s.alpha}) but the learned spread is above 1 (lower 95% bound ${round(learned?.lower ?? 1)}); ${scaled}`;
  }
  return spreadRejects
    ? `auto: the spread test rejects (p ${spreadP.toPrecision(3)} <= alpha ${s.alpha}, phi ${round(phi)}); ${scaled}`
    : `auto: the spread test does not reject (p ${spreadP.toPrecision(3)} > alpha ${s.alpha}); ${scaled}`;
}

/** Three significant digits, for notes and reasons. */
export function round(value: number): string {
  return value.toPrecision(3);
}
