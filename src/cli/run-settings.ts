import type { WindowJudge } from '../judge/judging-pipeline.js';
import { judgeSettingsOf, type JudgeSettings } from '../judge/judge-settings.js';
import { JudgingPipeline } from '../judge/judging-pipeline.js';
import { KeyAnalysis } from '../keys/key-analysis.js';
import type { KeySketchSettings } from '../keys/window-key-stats.js';
import type { RecordedSettings } from '../record/recording-line.js';
import type { ReviewSettings } from '../review/review-model.js';
import { UsageError } from '../errors/usage-error.js';
import type { ShardUniverse } from '../window/shard-universe.js';
import { refuseGiven, wholeNumber } from './option-values.js';

/** Key analysis settings: sketch sizes and re-placement simulations. */
export interface KeySettings {
  readonly sketch: KeySketchSettings;
  readonly simulations: number;
}

/**
 * Everything that decides how records become verdicts, read once from the options: the
 * windows, the clock bound, the judge and the key analysis. What a recording carries and
 * what a review report states are derived from it ({@link recordedSettingsOf},
 * {@link reviewSettingsOf}), never written out again.
 */
export interface RunSettings {
  readonly windowMs: number;
  readonly hopMs: number;
  readonly latenessMs: number;
  /** `--max-ahead`: the future bound, ms. */
  readonly maxAheadMs: number;
  readonly judge: JudgeSettings;
  /** Null with --no-keys. */
  readonly keys: KeySettings | null;
}

/** The key option values as parseArgs gives them. */
export interface KeyOptionValues {
  readonly 'no-keys'?: boolean;
  readonly 'key-counters'?: string;
  readonly 'key-registers'?: string;
  readonly 'key-simulations'?: string;
}

/** The key options, checked; null with --no-keys (then none of them may be given). */
export function readKeySettings(values: KeyOptionValues): KeySettings | null {
  const names = ['key-counters', 'key-registers', 'key-simulations'] as const;
  if (values['no-keys'] === true) {
    refuseGiven(values, names, 'cannot be combined with --no-keys');
    return null;
  }
  const counters =
    values['key-counters'] === undefined
      ? 16
      : wholeNumber('--key-counters', values['key-counters'], 1);
  if (counters > 1024) {
    throw new UsageError('--key-counters', values['key-counters'] as string, 'is above 1024');
  }
  const registers =
    values['key-registers'] === undefined
      ? 4096
      : wholeNumber('--key-registers', values['key-registers'], 16);
  if (registers > 65_536 || !Number.isInteger(Math.log2(registers))) {
    throw new UsageError(
      '--key-registers',
      values['key-registers'] as string,
      'is not a power of two from 16 to 65536',
    );
  }
  const simulations =
    values['key-simulations'] === undefined
      ? 1000
      : wholeNumber('--key-simulations', values['key-simulations'], 1);
  if (simulations > 100_000) {
    throw new UsageError(
      '--key-simulations',
      values['key-simulations'] as string,
      'is above 100000',
    );
  }
  return { sketch: { counters, registers }, simulations };
}

/**
 * The judging pipeline of a run over `universe`: windows, judge, key analysis, and the
 * clock rules of a live source or a replay.
 */
export function buildPipeline(
  universe: ShardUniverse,
  judge: WindowJudge,
  run: RunSettings,
  live: boolean,
): JudgingPipeline {
  const keys =
    run.keys === null
      ? undefined
      : new KeyAnalysis(universe, {
          windowMs: run.windowMs,
          hopMs: run.hopMs,
          sketch: run.keys.sketch,
          simulations: run.keys.simulations,
          alpha: run.judge.alpha,
          null: run.judge.null,
          maxFlagged: run.judge.maxFlagged,
        });
  return new JudgingPipeline(
    universe,
    { windowMs: run.windowMs, hopMs: run.hopMs, latenessMs: run.latenessMs },
    judge,
    Date.now,
    { keys, live, maxAheadMs: run.maxAheadMs },
  );
}

/** The settings a recording carries, so `review` can say what each verdict rested on. */
export function recordedSettingsOf(
  run: RunSettings,
  source: Readonly<Record<string, unknown>>,
  declaredUniverse: boolean,
): RecordedSettings {
  return {
    source,
    windowMs: run.windowMs,
    latenessMs: run.latenessMs,
    declaredUniverse,
    ...run.judge,
    keys:
      run.keys === null
        ? null
        : {
            counters: run.keys.sketch.counters,
            registers: run.keys.sketch.registers,
            simulations: run.keys.simulations,
          },
  };
}

/** What a review report states about the judging: from a run, or from a recording's settings. */
export function reviewSettingsOf(
  judge: Omit<RecordedSettings, 'source' | 'windowMs' | 'hopMs' | 'latenessMs'>,
  windowMs: number,
  hopMs: number,
): ReviewSettings {
  return {
    ...judgeSettingsOf(judge),
    windowMs,
    hopMs,
    declaredUniverse: judge.declaredUniverse ?? true,
  };
}
