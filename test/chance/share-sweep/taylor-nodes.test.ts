import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import {
  FULL,
  MAX_ORDER,
  aSeries,
  bucketBase,
  nodeAt,
  nodeMiss,
  ordersOf,
  pack,
  packedWidth,
  widerOrders,
} from '../../../src/chance/share-sweep/taylor-nodes.js';
import type { Side } from '../../../src/chance/share-sweep/sorted-shares.js';

// test/chance/reference/taylor-nodes.json, from make-node-reference.py beside it (mpmath
// 1.3.0, 60 digits; the same at 90): log T(k, xc) and the Taylor coefficients in the offset
// e of T(e) / T(0) - 1 (a_n) and log T(e) (b_n), from the regularized incomplete gamma and
// beta functions, and T(xc +- 1/2) / T(xc) itself.
interface NodeCase {
  law: 'poisson' | 'binomial';
  side: Side;
  rate?: number;
  total: number;
  scale: number;
  k: number;
  xc: string;
  g0: string;
  ratioPlus: string;
  ratioMinus: string;
  a: string[];
  b: string[];
}
const cases = (
  JSON.parse(readFileSync(new URL('../reference/taylor-nodes.json', import.meta.url), 'utf8')) as {
    cases: NodeCase[];
  }
).cases;

function nodeOf(c: NodeCase): Float64Array {
  const out = new Float64Array(FULL);
  const ok = nodeAt(
    {
      side: c.side,
      law: c.law === 'poisson' ? { kind: 'poisson', rate: c.rate as number } : { kind: 'binomial' },
      total: c.total,
      scale: c.scale,
    },
    c.k,
    Number(c.xc),
    out,
  );
  expect(ok).toBe(true);
  return out;
}

const label = (c: NodeCase) => `${c.law} ${c.side} k ${c.k} of N ${c.total}`;

describe('nodeAt', () => {
  it.each(cases.map((c) => [label(c), c] as const))(
    '%s: log tail and both series against mpmath',
    (_, c) => {
      const node = nodeOf(c);
      // The log tail to rounding: 1e-14 of its size.
      expect(Math.abs(node[0] - Number(c.g0))).toBeLessThanOrEqual(
        1e-14 * Math.max(1, Math.abs(Number(c.g0))),
      );
      // Each term's share at |e| = 1/2, the widest offset, to a tenth of the 1e-11 at which
      // the method cuts a series (sorted-shares.ts).
      for (let n = 1; n <= MAX_ORDER; n++) {
        expect(Math.abs(node[n] - Number(c.b[n - 1])) * 0.5 ** n, `b_${n}`).toBeLessThanOrEqual(
          1e-12,
        );
        expect(
          Math.abs(node[MAX_ORDER + n] - Number(c.a[n - 1])) * 0.5 ** n,
          `a_${n}`,
        ).toBeLessThanOrEqual(1e-12);
      }
    },
  );

  it.each(cases.map((c) => [label(c), c] as const))(
    '%s: packed at the orders it needs, the series gives the tail half a count away',
    (_, c) => {
      const node = nodeOf(c);
      const orders = ordersOf(node, 0.5, { b: 1, a: 1 });
      const packed = new Float64Array(packedWidth(orders));
      pack(node, orders, packed, 0);
      // Ten times the series cut, for the terms left out and their rounding.
      for (const [e, ratio] of [
        [0.5, c.ratioPlus],
        [-0.5, c.ratioMinus],
      ] as const) {
        expect(Math.abs(aSeries(packed, orders, e) / Number(ratio) - 1)).toBeLessThanOrEqual(1e-10);
      }
    },
  );

  it('refuses a tail that is not finite', () => {
    // A binomial count above its trials: P(X >= 11) of 10 trials is 0, log -Infinity.
    const out = new Float64Array(FULL);
    expect(
      nodeAt({ side: 'high', law: { kind: 'binomial' }, total: 10, scale: 100 }, 11, 10.5, out),
    ).toBe(false);
  });
});

describe('orders and packing', () => {
  it('ordersOf keeps terms down to 1e-11 at the offset, never fewer than already seen', () => {
    // A node whose terms fall by 10 per order: at h = 1/2 the term n is 10^-n 2^-n, first
    // below 1e-11 at n = 8 (20^-8 = 3.9e-11 is not; 20^-9 = 2e-12 is): 8 orders.
    const node = new Float64Array(FULL);
    for (let n = 1; n <= MAX_ORDER; n++) {
      node[n] = 10 ** -n;
      node[MAX_ORDER + n] = 10 ** -n;
    }
    expect(ordersOf(node, 0.5, { b: 1, a: 1 })).toEqual({ b: 8, a: 8 });
    expect(ordersOf(node, 0.5, { b: 12, a: 3 })).toEqual({ b: 12, a: 8 });
    // A series that does not settle within MAX_ORDER has no a-series (-1).
    node[2 * MAX_ORDER] = 1;
    expect(ordersOf(node, 0.5, { b: 1, a: 1 })).toEqual({ b: 8, a: -1 });
    expect(ordersOf(new Float64Array(FULL), 0.5, { b: 1, a: -1 })).toEqual({ b: 1, a: -1 });
  });

  it('widerOrders takes the longer of each; no a-series if either has none', () => {
    expect(widerOrders({ b: 3, a: 5 }, { b: 4, a: 2 })).toEqual({ b: 4, a: 5 });
    expect(widerOrders({ b: 3, a: -1 }, { b: 2, a: 7 })).toEqual({ b: 3, a: -1 });
  });

  it('pack lays out g_0, b_1..b_B, a_1..a_A at an offset; packedWidth counts them', () => {
    const full = Float64Array.from({ length: FULL }, (_, index) => index);
    const out = new Float64Array(8);
    expect(packedWidth({ b: 3, a: 2 })).toBe(6);
    expect(packedWidth({ b: 3, a: -1 })).toBe(4);
    pack(full, { b: 3, a: 2 }, out, 2);
    expect(Array.from(out)).toEqual([0, 0, 0, 1, 2, 3, 17, 18]);
  });

  it('aSeries is 1 + A(e), or exp(B(e)) without an a-series', () => {
    // g_0, b_1 = 0.5, b_2 = 0.25, a_1 = 0.1: at e = 2, 1 + 0.2; without it exp(1 + 1).
    const packed = [0, 0.5, 0.25, 0.1];
    expect(aSeries(packed, { b: 2, a: 1 }, 2)).toBeCloseTo(1.2, 15);
    expect(aSeries(packed, { b: 2, a: -1 }, 2)).toBeCloseTo(Math.exp(2), 14);
  });

  it('nodeMiss is the largest gap in log tail or relative tail at +-h', () => {
    const x = [-3, 0.5, 0.1];
    const y = [-3, 0.5, 0.1];
    expect(nodeMiss(x, y, { b: 1, a: 1 }, 0.5)).toBe(0);
    // g_0 apart by 1e-6: the log tails differ by that.
    expect(nodeMiss([-3 + 1e-6, 0.5, 0.1], y, { b: 1, a: 1 }, 0.5)).toBeCloseTo(1e-6, 15);
    // a_1 apart by 0.02: at e = -1/2, (1 - 0.06) / (1 - 0.05) - 1 = -0.0105..., the larger gap.
    expect(nodeMiss([-3, 0.5, 0.12], y, { b: 1, a: 1 }, 0.5)).toBeCloseTo(0.01 / 0.95, 15);
  });

  it('bucketBase: (k - 1, k] on side high, [k, k + 1) on side low', () => {
    expect(bucketBase('high', 30)).toBe(29);
    expect(bucketBase('low', 30)).toBe(30);
  });
});
