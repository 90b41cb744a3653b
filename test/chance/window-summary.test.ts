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
});
