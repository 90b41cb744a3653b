import { describe, expect, it } from 'vitest';
import {
  type RunSettings,
  readKeySettings,
  recordedSettingsOf,
  reviewSettingsOf,
} from '../../src/cli/run-settings.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';

describe('readKeySettings', () => {
  it('the defaults: 16 counters, 4096 registers, 1000 simulations; --no-keys turns it off', () => {
    expect(readKeySettings({})).toEqual({
      sketch: { counters: 16, registers: 4096 },
      simulations: 1000,
    });
    expect(readKeySettings({ 'no-keys': true })).toBeNull();
    expect(
      readKeySettings({
        'key-counters': '1024',
        'key-registers': '65536',
        'key-simulations': '100000',
      }),
    ).toEqual({ sketch: { counters: 1024, registers: 65_536 }, simulations: 100_000 });
  });

  it('refusals name the option and the value', () => {
    expect(() => readKeySettings({ 'no-keys': true, 'key-registers': '16' })).toThrow(
      '--key-registers: "16" cannot be combined with --no-keys',
    );
    expect(() => readKeySettings({ 'key-counters': '1025' })).toThrow(
      '--key-counters: "1025" is above 1024',
    );
    expect(() => readKeySettings({ 'key-registers': '100' })).toThrow(
      '--key-registers: "100" is not a power of two from 16 to 65536',
    );
    expect(() => readKeySettings({ 'key-registers': '131072' })).toThrow(
      '--key-registers: "131072" is not a power of two from 16 to 65536',
    );
    expect(() => readKeySettings({ 'key-registers': '8' })).toThrow(
      '--key-registers: "8" must be at least 16',
    );
    expect(() => readKeySettings({ 'key-simulations': '100001' })).toThrow(
      '--key-simulations: "100001" is above 100000',
    );
  });
});

const run: RunSettings = {
  windowMs: 10_000,
  hopMs: 5_000,
  latenessMs: 2_000,
  maxAheadMs: 3_600_000,
  judge: { ...defaultJudgeSettings, hopMs: 5_000 },
  keys: { sketch: { counters: 16, registers: 4096 }, simulations: 1000 },
};

describe('recordedSettingsOf and reviewSettingsOf', () => {
  it('a recording carries the windows, the judge and the key settings, never the clock bound', () => {
    expect(recordedSettingsOf(run, { kind: 'scenario', name: 'demo' }, true)).toEqual({
      source: { kind: 'scenario', name: 'demo' },
      windowMs: 10_000,
      latenessMs: 2_000,
      declaredUniverse: true,
      ...defaultJudgeSettings,
      hopMs: 5_000,
      keys: { counters: 16, registers: 4096, simulations: 1000 },
    });
    expect(recordedSettingsOf({ ...run, keys: null }, {}, false).keys).toBeNull();
  });

  it('a review states the judge’s settings; a recording from before the flag was declared', () => {
    const recorded = recordedSettingsOf(run, {}, false);
    expect(reviewSettingsOf(recorded, 10_000, 5_000)).toEqual({
      null: 'uniform',
      spread: 'auto',
      alpha: 0.001,
      minExcess: 0.2,
      minDispersion: 1.5,
      maxDetectable: 3,
      confirm: 3,
      clear: 5,
      maxFlagged: 10,
      baselineWindows: 60,
      windowMs: 10_000,
      hopMs: 5_000,
      declaredUniverse: false,
    });
    // Recordings made before the flag existed lack it: their universe was declared.
    const older: Record<string, unknown> = { ...recorded };
    delete older.declaredUniverse;
    expect(
      reviewSettingsOf(older as unknown as typeof recorded, 10_000, 5_000).declaredUniverse,
    ).toBe(true);
  });
});
