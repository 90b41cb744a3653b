import { describe, expect, it } from 'vitest';
import { cellPart, cellValue } from '../../../src/chance/share-sweep/cells.js';
import {
  FULL,
  type NodeSetting,
  nodeAt,
  nodeMiss,
  pack,
} from '../../../src/chance/share-sweep/taylor-nodes.js';

describe('cellPart and cellValue', () => {
  it.each([
    [
      'binomial, side high',
      { side: 'high', law: { kind: 'binomial' }, total: 200_000, scale: 250_000 },
      100,
      2000,
    ],
    [
      'Poisson, side low',
      { side: 'low', law: { kind: 'poisson', rate: 200_000 }, total: 200_000, scale: 160_000 },
      70,
      1500,
    ],
  ] as [string, NodeSetting, number, number][])(
    '%s: every count from first to last within the checks of exact nodes',
    (_, setting, first, last) => {
      const part = cellPart(setting, first, last, 0.5);
      expect(part).not.toBeNull();
      const cells = part as NonNullable<typeof part>;
      expect(cells.first).toBe(first);
      expect(cells.last).toBe(last);
      expect(cells.starts[0]).toBe(first);
      // About 2% relative width, at least 3 counts.
      for (let c = 1; c < cells.starts.length; c++) {
        const width = cells.starts[c] - cells.starts[c - 1];
        expect(width).toBeGreaterThanOrEqual(3);
        expect(width).toBeLessThanOrEqual(Math.max(3, Math.round(0.02 * cells.starts[c - 1])) + 2);
      }
      if (setting.law.kind === 'binomial') expect(cells.orders.b).toBe(0);
      const node = new Float64Array(FULL);
      const exact = new Float64Array(cells.width);
      const value = new Float64Array(cells.width);
      let c = 0;
      for (let k = first; k <= last; k++) {
        while (c + 1 < cells.starts.length && cells.starts[c + 1] <= k) c++;
        const centre = setting.side === 'high' ? k - 0.5 : k + 0.5;
        expect(nodeAt(setting, k, centre, node)).toBe(true);
        pack(node, cells.orders, exact, 0);
        cellValue(cells, c, k, value);
        // The cell's check against its interpolant (1e-8) plus the interpolant's against
        // exact nodes (1e-9), as documented at the head of sorted-shares.ts.
        expect(nodeMiss(value, exact, cells.orders, 0.5), `k ${k}`).toBeLessThanOrEqual(1.1e-8);
      }
      expect(cells.peak).toBeLessThanOrEqual(0);
    },
  );
});
