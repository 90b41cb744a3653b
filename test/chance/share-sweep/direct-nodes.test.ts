import { describe, expect, it } from 'vitest';
import { directPart } from '../../../src/chance/share-sweep/direct-nodes.js';
import {
  FULL,
  type NodeSetting,
  aSeries,
  bucketBase,
  nodeAt,
  pack,
} from '../../../src/chance/share-sweep/taylor-nodes.js';

// Counts as the coefficient table asks for them: from 2 on side high (the count 1 is in
// closed form there), from 1 on side low here so that no part's edge sits at position 0.
describe('directPart', () => {
  it.each([
    [
      'Poisson, side high',
      { side: 'high', law: { kind: 'poisson', rate: 1000 }, total: 1000, scale: 1500 },
      2,
      40,
    ],
    [
      'binomial, side low',
      { side: 'low', law: { kind: 'binomial' }, total: 1000, scale: 800 },
      1,
      40,
    ],
  ] as [string, NodeSetting, number, number][])(
    '%s: a node per part of every count, each series reaching the edges of its part',
    (_, setting, first, last) => {
      const part = directPart(setting, first, last, 0);
      expect(part).not.toBeNull();
      const direct = part as NonNullable<typeof part>;
      expect(direct.subs).toHaveLength(last - first + 1);
      expect(direct.offsets[0]).toBe(0);
      const node = new Float64Array(FULL);
      const packed = new Float64Array(direct.width);
      const edge = new Float64Array(FULL);
      for (let i = 0; i <= last - first; i++) {
        const k = first + i;
        const sub = direct.subs[i];
        expect([1, 2, 4, 8, 16]).toContain(sub);
        expect(direct.offsets[i + 1] - direct.offsets[i]).toBe(sub);
        for (let j = 0; j < sub; j++) {
          const xc = bucketBase(setting.side, k) + (j + 0.5) / sub;
          expect(nodeAt(setting, k, xc, node)).toBe(true);
          pack(node, direct.orders, packed, 0);
          const at = (direct.offsets[i] + j) * direct.width;
          expect(Array.from(direct.nodes.slice(at, at + direct.width))).toEqual(Array.from(packed));
          // The tail at the part's edges from the series, against exact tails there (log
          // tails from nodeAt, themselves checked against mpmath in taylor-nodes.test.ts):
          // ten times the 1e-11 series cut.
          for (const e of [-0.5 / sub, 0.5 / sub]) {
            expect(nodeAt(setting, k, xc + e, edge)).toBe(true);
            const ratio = Math.exp(edge[0] - node[0]);
            const series = aSeries(direct.nodes.subarray(at, at + direct.width), direct.orders, e);
            expect(Math.abs(series / ratio - 1), `k ${k} part ${j} e ${e}`).toBeLessThanOrEqual(
              1e-10,
            );
          }
        }
      }
      expect(direct.peak).toBeLessThanOrEqual(0);
    },
  );
});
