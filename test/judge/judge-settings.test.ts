import { describe, expect, it } from 'vitest';
import {
  type JudgeSettings,
  checkJudgeSettings,
  defaultJudgeSettings,
} from '../../src/judge/judge-settings.js';

const good: JudgeSettings = { ...defaultJudgeSettings, hopMs: 10_000 };

describe('defaultJudgeSettings', () => {
  it('the documented defaults (docs/formats.md and docs/model.md)', () => {
    expect(defaultJudgeSettings).toEqual({
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
    });
  });
});

describe('checkJudgeSettings', () => {
  it('returns good settings as they are', () => {
    expect(checkJudgeSettings(good)).toBe(good);
    expect(checkJudgeSettings({ ...good, minExcess: 0, minDispersion: 1 })).toBeTruthy();
  });

  it.each([
    [{ alpha: 0 }, '--alpha: "0" must be a probability between 0 and 1'],
    [{ alpha: 1 }, '--alpha: "1" must be a probability between 0 and 1'],
    [{ alpha: Number.NaN }, '--alpha: "NaN" must be a probability between 0 and 1'],
    [{ minExcess: -0.1 }, '--min-excess: "-0.1" must be a finite number, 0 or more'],
    [{ minExcess: Infinity }, '--min-excess: "Infinity" must be a finite number, 0 or more'],
    [
      { minDispersion: 0.9 },
      '--min-dispersion: "0.9" must be a finite number, 1 or more (phi is 1 under random placement)',
    ],
    [
      { maxDetectable: 1 },
      '--max-detectable: "1" must be a finite multiple of the fair share above 1',
    ],
    [{ confirm: 0 }, '--confirm: "0" must be a whole number, 1 or more'],
    [{ clear: 1.5 }, '--clear: "1.5" must be a whole number, 1 or more'],
    [{ maxFlagged: 0 }, '--max-flagged: "0" must be a whole number, 1 or more'],
    [{ baselineWindows: 0 }, '--baseline: "0" must be a whole number, 1 or more'],
    [{ hopMs: 0 }, '--hop: "0" must be a whole number, 1 or more'],
    [{ null: 'lucky' }, '--null: "lucky" is not one of uniform, map, baseline'],
    [{ spread: 'wide' }, '--spread: "wide" is not one of exact, robust, auto'],
  ] as [Partial<Record<keyof JudgeSettings, unknown>>, string][])(
    'refuses %o naming the option and the value',
    (change, message) => {
      expect(() => checkJudgeSettings({ ...good, ...change } as JudgeSettings)).toThrow(message);
    },
  );
});
