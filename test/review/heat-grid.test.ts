import { describe, expect, it } from 'vitest';
import { HeatGrid } from '../../src/review/heat-grid.js';

// Loads are sums of halves, exact in the grid's 32-bit floats.
const loads = [
  [1, 2],
  [3, 4],
  [0.5, 1.5],
  [2, 2],
  [1, 1],
  [3, 3],
];

function filled(windows: number): HeatGrid {
  const grid = new HeatGrid(2);
  for (let w = 0; w < windows; w++) grid.add(w * 10, (w + 1) * 10, Float64Array.from(loads[w]), 2);
  return grid;
}

describe('HeatGrid', () => {
  it('one column per window up to twice the columns asked for', () => {
    const grid = filled(4);
    expect(grid.columns).toEqual([
      { start: 0, end: 10 },
      { start: 10, end: 20 },
      { start: 20, end: 30 },
      { start: 30, end: 40 },
    ]);
    expect(grid.means(0)).toEqual([1, 3, 0.5, 2]);
  });

  it('then neighbours merge in pairs and each column holds twice the windows, as means', () => {
    // Windows 0+1, 2+3, then 4+5 in the column opened after the merge.
    const grid = filled(6);
    expect(grid.columns).toEqual([
      { start: 0, end: 20 },
      { start: 20, end: 40 },
      { start: 40, end: 60 },
    ]);
    expect(grid.means(0)).toEqual([2, 1.25, 2]);
    expect(grid.means(1)).toEqual([3, 1.75, 2]);
    // A shard the grid never saw reads 0 in every column.
    expect(grid.means(7)).toEqual([0, 0, 0]);
  });

  it('a growing universe widens the grid; earlier columns read 0 for the new shard', () => {
    const grid = filled(2);
    grid.add(20, 30, Float64Array.from([1, 1, 5]), 3);
    expect(grid.means(2)).toEqual([0, 0, 5]);
  });

  it('follows a retirement: rows move to their new index, a retired shard’s are dropped', () => {
    const grid = filled(6);
    grid.follow(Int32Array.from([-1, 0]));
    expect(grid.means(0)).toEqual([3, 1.75, 2]);
    expect(grid.means(1)).toEqual([0, 0, 0]);
  });
});
