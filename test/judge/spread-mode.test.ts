import { describe, expect, it } from 'vitest';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { SpreadEstimate } from '../../src/judge/pooled-spread.js';
import { describeSpreadMode, leastShardsForRobust, round } from '../../src/judge/spread-mode.js';

// The reasons are our own wording; each expected sentence is worked by hand from the
// branches of describeSpreadMode, numbers to three significant digits (toPrecision(3)).
const settings = { ...defaultJudgeSettings, hopMs: 10_000 };
const learned: SpreadEstimate = { phi: 1.6, upper: 1.9, lower: 1.3, windows: 20, leftOut: 0 };

describe('describeSpreadMode', () => {
  it('a fixed mode names the option; counts as they are', () => {
    expect(
      describeSpreadMode(64, { ...settings, spread: 'exact' }, false, true, 1e-9, 2, null, 1, 1),
    ).toBe('--spread exact: counts judged as they are');
  });

  it('robust mode before the learned spread is ready divides for the baseline’s uncertainty', () => {
    expect(
      describeSpreadMode(64, { ...settings, spread: 'robust' }, false, false, 0.5, 1, null, 1, 1.4),
    ).toBe("--spread robust: counts divided by 1.40 for the learned baseline's own uncertainty");
  });

  it('robust with a learned spread at most 1: judged as they are', () => {
    const calm: SpreadEstimate = { phi: 0.9, upper: 0.98, lower: 0.8, windows: 20, leftOut: 0 };
    expect(
      describeSpreadMode(64, { ...settings, spread: 'robust' }, true, false, 0.5, 1, calm, 1, 1),
    ).toBe(
      '--spread robust: learned phi 0.900 over 20 windows, upper 95% bound 0.980 is at most 1, so counts are judged as they are',
    );
  });

  it('auto, the test rejects but too few shards for a robust spread', () => {
    expect(leastShardsForRobust).toBe(16);
    expect(describeSpreadMode(8, settings, false, true, 0.000123, 2.5, null, 1, 1)).toBe(
      'auto: the spread test rejects (p 0.000123 <= alpha 0.001, phi 2.50) but 8 shards are too few for a robust spread (16 needed); counts judged as they are',
    );
  });

  it('auto, the test does not reject but the learned spread is above 1: matched on the tail', () => {
    expect(describeSpreadMode(64, settings, true, false, 0.42, 1.1, learned, 1.2, 1.9)).toBe(
      'auto: the spread test does not reject (p 0.420 > alpha 0.001) but the learned spread is above 1 (lower 95% bound 1.30); counts divided by 1.90 (learned phi 1.60 over 20 windows, upper 95% bound 1.90, matched on the tail of clumped counts)',
    );
  });

  it('auto, the test rejects and the window is beyond the learned spread: its own robust phi', () => {
    expect(describeSpreadMode(64, settings, true, true, 1e-7, 3.41, learned, 3.2, 3.2)).toBe(
      'auto: the spread test rejects (p 1.00e-7 <= alpha 0.001, phi 3.41); counts divided by 3.20 (learned phi 1.60 over 20 windows, upper 95% bound 1.90; this window is beyond it, so its own robust phi 3.20)',
    );
  });

  it('auto, at 16 shards a rejection is judged robust without the too-few note', () => {
    expect(describeSpreadMode(16, settings, false, true, 0.0005, 1.8, null, 1, 1)).toBe(
      'auto: the spread test rejects (p 0.000500 <= alpha 0.001, phi 1.80); counts judged as they are',
    );
    expect(describeSpreadMode(16, settings, false, false, 0.5, 1, null, 1, 1)).toBe(
      'auto: the spread test does not reject (p 0.500 > alpha 0.001); counts judged as they are',
    );
  });
});

describe('round', () => {
  it('three significant digits, as JavaScript’s toPrecision(3) writes them', () => {
    expect(round(2)).toBe('2.00');
    expect(round(0.000123456)).toBe('0.000123');
    expect(round(1.23456)).toBe('1.23');
    expect(round(12345)).toBe('1.23e+4');
  });
});
