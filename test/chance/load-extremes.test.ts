import { describe, expect, it } from 'vitest';
import { LoadExtremes } from '../../src/chance/load-extremes.js';

// The highest and lowest of a list, the first on ties: common practice (the order a one-pass
// scan with strict comparisons gives), checked on lists worked by hand.
describe('LoadExtremes', () => {
  it('finds the highest and the lowest, the first shard on ties', () => {
    const extremes = new LoadExtremes();
    [1, 1.5, 0.5, 1.5, 0.5, 1].forEach((load, index) => extremes.see(index, load));
    expect(extremes.highest).toBe(1);
    expect(extremes.highestValue).toBe(1.5);
    expect(extremes.lowest).toBe(2);
    expect(extremes.lowestValue).toBe(0.5);
  });

  it('ranks each side by its own value when given two', () => {
    const extremes = new LoadExtremes();
    extremes.see(0, 2, 0.9);
    extremes.see(1, 1.5, 0.4);
    extremes.see(2, 1.9, 1.2);
    expect([extremes.highest, extremes.highestValue]).toEqual([0, 2]);
    expect([extremes.lowest, extremes.lowestValue]).toEqual([1, 0.4]);
  });

  it('keeps infinite loads (a shard with requests and no share) and never takes a NaN', () => {
    const extremes = new LoadExtremes();
    extremes.see(0, Number.NaN);
    extremes.see(1, 1);
    extremes.see(2, Infinity);
    expect(extremes.highest).toBe(2);
    expect(extremes.lowest).toBe(1);
  });
});
