import { describe, expect, it } from 'vitest';
import { judgeOptionNames, readJudgeSettings } from '../../src/cli/judge-options.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';

describe('readJudgeSettings', () => {
  it('without options, the documented defaults; --null map by default when shares are declared', () => {
    expect(readJudgeSettings({}, { sharesDeclared: false, hopMs: 10_000 })).toEqual({
      ...defaultJudgeSettings,
      null: 'uniform',
      hopMs: 10_000,
    });
    expect(readJudgeSettings({}, { sharesDeclared: true, hopMs: 5_000 }).null).toBe('map');
  });

  it('each option read in its own terms', () => {
    expect(
      readJudgeSettings(
        {
          alpha: '0.01',
          'min-excess': '0',
          'min-dispersion': '1',
          'max-detectable': '2.5',
          null: 'baseline',
          baseline: '30',
          spread: 'robust',
          confirm: '2',
          clear: '4',
          'max-flagged': '3',
        },
        { sharesDeclared: false, hopMs: 10_000 },
      ),
    ).toEqual({
      alpha: 0.01,
      minExcess: 0,
      minDispersion: 1,
      maxDetectable: 2.5,
      null: 'baseline',
      baselineWindows: 30,
      spread: 'robust',
      confirm: 2,
      clear: 4,
      maxFlagged: 3,
      hopMs: 10_000,
    });
  });

  it('an absent option keeps the base’s value (a recording’s own settings in review)', () => {
    const base = { ...defaultJudgeSettings, alpha: 0.05, confirm: 7, null: 'map' as const };
    const settings = readJudgeSettings(
      { clear: '9' },
      { sharesDeclared: true, hopMs: 1_000, base },
    );
    expect([settings.alpha, settings.confirm, settings.clear, settings.null]).toEqual([
      0.05,
      7,
      9,
      'map',
    ]);
  });

  it('refusals name the option and the value', () => {
    const read = (values: Parameters<typeof readJudgeSettings>[0]) => () =>
      readJudgeSettings(values, { sharesDeclared: false, hopMs: 10_000 });
    expect(read({ null: 'map' })).toThrow(
      '--null: "map" needs --shard-map FILE (or a --scenario) to take the shares from; use uniform for equal shares',
    );
    expect(read({ 'max-detectable': '1' })).toThrow('--max-detectable: "1" must be above 1');
    expect(read({ 'min-dispersion': '0.5' })).toThrow('--min-dispersion: "0.5" must be at least 1');
    expect(read({ confirm: '0' })).toThrow('--confirm: "0" must be at least 1');
    expect(read({ 'max-flagged': '2.5' })).toThrow('--max-flagged: "2.5" is not a whole number');
    expect(read({ 'min-excess': 'lots' })).toThrow('--min-excess: "lots" is not a number');
    expect(read({ alpha: '1' })).toThrow('--alpha: "1" must be below 1');
  });

  it('the option names as typed', () => {
    expect(judgeOptionNames).toEqual([
      'alpha',
      'min-excess',
      'min-dispersion',
      'max-detectable',
      'null',
      'baseline',
      'spread',
      'confirm',
      'clear',
      'max-flagged',
    ]);
  });
});
