import { describe, expect, it } from 'vitest';
import { makePlacement } from '../../src/chance/placement.js';
import { summarizeWindow } from '../../src/chance/window-summary.js';

describe('summarizeWindow', () => {
  it('documented example: 23 requests on 365 equal shards with one pair, fullest p = 0.5073', () => {
    // The birthday problem, P(some day holds 2 of 23) = 0.5072972343239857 (published).
    const counts = new Array<number>(365).fill(0);
    for (let i = 0; i < 22; i++) counts[i] = 1;
    counts[0] = 2;
    const summary = summarizeWindow(makePlacement(23, 365), counts, 0.001);
    expect(Math.abs(summary.fullest.p / 0.5072972343239857 - 1)).toBeLessThan(1e-9);
  });

  it('names the fullest and emptiest shard with their counts and relative loads (worked by hand)', () => {
    // Same window: the fair share is 23 / 365, so the pair's relative load is 2 * 365 / 23;
    // the first empty shard is index 22, and with 23 requests on 365 shards some shard is
    // always empty (P(min r <= 0) = 1).
    const counts = new Array<number>(365).fill(0);
    for (let i = 0; i < 22; i++) counts[i] = 1;
    counts[0] = 2;
    const summary = summarizeWindow(makePlacement(23, 365), counts, 0.001);
    expect(summary.fullest).toMatchObject({ index: 0, count: 2 });
    expect(summary.fullest.relative).toBeCloseTo((2 * 365) / 23, 12);
    expect(summary.fullest.logP).toBeCloseTo(Math.log(summary.fullest.p), 12);
    expect(summary.emptiest).toMatchObject({ index: 22, count: 0, relative: 0 });
    expect(summary.emptiest.p).toBeCloseTo(1, 12);
    // Without the empty tests the emptiest shard is still named, its test marked off.
    const off = summarizeWindow(makePlacement(23, 365), counts, 0.001, false);
    expect(off.emptiest).toMatchObject({ index: 22, count: 0, relative: 0, p: 1, method: 'off' });
  });
});
