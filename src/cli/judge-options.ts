import { defaultJudgeSettings, type JudgeSettings } from '../judge/judge-settings.js';
import type { NullModelName, SpreadModeName } from '../judge/judgement.js';
import { UsageError } from '../errors/usage-error.js';
import { finiteNumber, probability, wholeNumber } from './option-values.js';

/**
 * The judging options `watch` and `review` share, read once so both commands accept and
 * reject the same values with the same messages.
 */

/** The parseArgs specs of the judging options. */
export const judgeOptionSpec = {
  alpha: { type: 'string' },
  'min-excess': { type: 'string' },
  'min-dispersion': { type: 'string' },
  'max-detectable': { type: 'string' },
  null: { type: 'string' },
  baseline: { type: 'string' },
  spread: { type: 'string' },
  confirm: { type: 'string' },
  clear: { type: 'string' },
  'max-flagged': { type: 'string' },
} as const;

/** The judging option values as parseArgs gives them. */
export type JudgeOptionValues = { readonly [K in keyof typeof judgeOptionSpec]?: string };

/** The names of the options above, as typed on the command line. */
export const judgeOptionNames: readonly string[] = Object.keys(judgeOptionSpec);

/**
 * Judge settings from the options, each absent one taken from `base` (the documented
 * defaults for `watch`, a recording's own settings for `review`).
 *
 * @param sharesDeclared true when a shard map or a scenario gives the shares, so `--null
 *   map` has shares to use (and is the default when `base.null` is not given)
 */
export function readJudgeSettings(
  values: JudgeOptionValues,
  options: {
    readonly sharesDeclared: boolean;
    readonly hopMs: number;
    readonly base?: Omit<JudgeSettings, 'hopMs'>;
  },
): JudgeSettings {
  const base = options.base ?? {
    ...defaultJudgeSettings,
    null: (options.sharesDeclared ? 'map' : 'uniform') as NullModelName,
  };
  const nullModel = (values.null ?? base.null) as NullModelName;
  if (nullModel === 'map' && !options.sharesDeclared) {
    throw new UsageError(
      '--null',
      'map',
      'needs --shard-map FILE (or a --scenario) to take the shares from; use uniform for equal shares',
    );
  }
  return {
    ...base,
    null: nullModel,
    spread: (values.spread ?? base.spread) as SpreadModeName,
    alpha: values.alpha === undefined ? base.alpha : probability('--alpha', values.alpha),
    minExcess:
      values['min-excess'] === undefined
        ? base.minExcess
        : finiteNumber('--min-excess', values['min-excess'], { min: 0 }),
    minDispersion:
      values['min-dispersion'] === undefined
        ? base.minDispersion
        : finiteNumber('--min-dispersion', values['min-dispersion'], { min: 1 }),
    maxDetectable:
      values['max-detectable'] === undefined
        ? base.maxDetectable
        : finiteNumber('--max-detectable', values['max-detectable'], {
            min: 1,
            minExclusive: true,
          }),
    confirm:
      values.confirm === undefined ? base.confirm : wholeNumber('--confirm', values.confirm, 1),
    clear: values.clear === undefined ? base.clear : wholeNumber('--clear', values.clear, 1),
    maxFlagged:
      values['max-flagged'] === undefined
        ? base.maxFlagged
        : wholeNumber('--max-flagged', values['max-flagged'], 1),
    baselineWindows:
      values.baseline === undefined
        ? base.baselineWindows
        : wholeNumber('--baseline', values.baseline, 1),
    hopMs: options.hopMs,
  };
}
