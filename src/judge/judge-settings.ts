import { UsageError } from '../errors/usage-error.js';
import type { NullModelName, SpreadModeName } from './judgement.js';

/** How the judge decides. Every field maps to a `watch` option, named in its errors. */
export interface JudgeSettings {
  /** `--alpha`: significance level of every test, in (0, 1). */
  readonly alpha: number;
  /** `--min-excess`: a hotspot needs relative load >= 1 + this (a practical floor, >= 0). */
  readonly minExcess: number;
  /** `--min-dispersion`: uneven needs phi above this (>= 1). */
  readonly minDispersion: number;
  /** `--max-detectable`: above this detectable excess (a multiple, > 1) the window has too little traffic. */
  readonly maxDetectable: number;
  /** `--confirm`: consecutive flagged windows that open an incident (>= 1). */
  readonly confirm: number;
  /** `--clear`: consecutive clean windows that clear one (>= 1). */
  readonly clear: number;
  /** `--max-flagged`: most shards listed per window (>= 1). */
  readonly maxFlagged: number;
  /** `--null`. */
  readonly null: NullModelName;
  /** `--spread`. */
  readonly spread: SpreadModeName;
  /** `--baseline`: span of the learned baseline, in windows (>= 1). */
  readonly baselineWindows: number;
  /** `--hop` (the window length for tumbling windows), ms: windows per day for the false-incident rate. */
  readonly hopMs: number;
}

/** The documented defaults (docs/formats.md and docs/model.md). */
export const defaultJudgeSettings: Omit<JudgeSettings, 'hopMs'> = {
  alpha: 0.001,
  minExcess: 0.2,
  minDispersion: 1.5,
  maxDetectable: 3,
  confirm: 3,
  clear: 5,
  maxFlagged: 10,
  null: 'uniform',
  spread: 'auto',
  baselineWindows: 60,
};

/**
 * The judge's own settings, all but the hop, out of a wider record that carries them (a
 * recording's settings), so that nothing else rides along into a Judge or a report.
 */
export function judgeSettingsOf(
  settings: Omit<JudgeSettings, 'hopMs'>,
): Omit<JudgeSettings, 'hopMs'> {
  return {
    alpha: settings.alpha,
    minExcess: settings.minExcess,
    minDispersion: settings.minDispersion,
    maxDetectable: settings.maxDetectable,
    confirm: settings.confirm,
    clear: settings.clear,
    maxFlagged: settings.maxFlagged,
    null: settings.null,
    spread: settings.spread,
    baselineWindows: settings.baselineWindows,
  };
}

const nullModels: readonly NullModelName[] = ['uniform', 'map', 'baseline'];
const spreadModes: readonly SpreadModeName[] = ['exact', 'robust', 'auto'];

/**
 * Checks settings when a judge is built, so a bad value fails at start-up with the option
 * and the value in the message (a UsageError), never halfway through a run.
 */
export function checkJudgeSettings(settings: JudgeSettings): JudgeSettings {
  const s = settings;
  if (!(s.alpha > 0 && s.alpha < 1)) {
    throw new UsageError('--alpha', String(s.alpha), 'must be a probability between 0 and 1');
  }
  if (!(s.minExcess >= 0) || !Number.isFinite(s.minExcess)) {
    throw new UsageError('--min-excess', String(s.minExcess), 'must be a finite number, 0 or more');
  }
  if (!(s.minDispersion >= 1) || !Number.isFinite(s.minDispersion)) {
    throw new UsageError(
      '--min-dispersion',
      String(s.minDispersion),
      'must be a finite number, 1 or more (phi is 1 under random placement)',
    );
  }
  if (!(s.maxDetectable > 1) || !Number.isFinite(s.maxDetectable)) {
    throw new UsageError(
      '--max-detectable',
      String(s.maxDetectable),
      'must be a finite multiple of the fair share above 1',
    );
  }
  wholeAtLeast('--confirm', s.confirm, 1);
  wholeAtLeast('--clear', s.clear, 1);
  wholeAtLeast('--max-flagged', s.maxFlagged, 1);
  wholeAtLeast('--baseline', s.baselineWindows, 1);
  wholeAtLeast('--hop', s.hopMs, 1);
  if (!nullModels.includes(s.null)) {
    throw new UsageError('--null', String(s.null), `is not one of ${nullModels.join(', ')}`);
  }
  if (!spreadModes.includes(s.spread)) {
    throw new UsageError('--spread', String(s.spread), `is not one of ${spreadModes.join(', ')}`);
  }
  return settings;
}

function wholeAtLeast(option: string, value: number, least: number): void {
  if (!Number.isSafeInteger(value) || value < least) {
    throw new UsageError(option, String(value), `must be a whole number, ${least} or more`);
  }
}
