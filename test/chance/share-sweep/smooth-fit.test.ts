import { describe, expect, it } from 'vitest';
import {
  PIECE_SPAN,
  fitOf,
  pieceNodes,
  smoothValue,
} from '../../../src/chance/share-sweep/smooth-fit.js';
import {
  FULL,
  type NodeSetting,
  nodeAt,
  nodeMiss,
  pack,
  packedWidth,
} from '../../../src/chance/share-sweep/taylor-nodes.js';

// Barycentric Lagrange interpolation through n + 1 distinct nodes reproduces every
// polynomial of degree at most n (Berrut and Trefethen 2004, SIAM Review 46(3), section 3).
describe('fitOf and smoothValue', () => {
  const ks = [0, 3, 10, 30, 60];
  const centre = (Math.log(1) + Math.log(61)) / 2;
  const radius = (Math.log(61) - Math.log(1)) / 2;
  const scaled = (k: number) => (Math.log(k + 1) - centre) / radius;
  // A cubic and a line in the scaled log(k + 1), as g_0 and b_1; a_1 a constant.
  const g = (x: number) => 2 - x + 0.5 * x ** 3;
  const b = (x: number) => 0.25 + 3 * x;
  const full = ks.map((k) => {
    const node = new Float64Array(FULL);
    node[0] = g(scaled(k));
    node[1] = b(scaled(k));
    node[17] = 0.125;
    return node;
  });
  const orders = { b: 1, a: 1 };
  const fit = fitOf({ ks, full, orders, peak: 2, centre, radius }, orders);

  it('packs g_0, b_1 and a_1 of each node and places the nodes in [-1, 1]', () => {
    expect(fit.width).toBe(packedWidth(orders));
    expect(fit.at[0]).toBeCloseTo(-1, 15);
    expect(fit.at[4]).toBeCloseTo(1, 15);
    expect(Array.from(fit.values.slice(0, 3))).toEqual([full[0][0], full[0][1], 0.125]);
    expect(Array.from(fit.values.slice(12, 15))).toEqual([full[4][0], full[4][1], 0.125]);
  });

  it('reproduces polynomials of degree below the node count between the nodes', () => {
    const out = new Float64Array(3);
    for (const k of [1, 7, 20, 45, 59]) {
      smoothValue(fit, k, out);
      expect(out[0], `g at ${k}`).toBeCloseTo(g(scaled(k)), 13);
      expect(out[1], `b at ${k}`).toBeCloseTo(b(scaled(k)), 13);
      expect(out[2], `a at ${k}`).toBeCloseTo(0.125, 14);
    }
  });

  it('gives a node’s own values at the node', () => {
    const out = new Float64Array(3);
    smoothValue(fit, 10, out);
    expect(Array.from(out)).toEqual([full[2][0], full[2][1], 0.125]);
  });
});

describe('pieceNodes', () => {
  // A binomial shard of N = 200000 at 1.25x (position = share * 250000), side high.
  const setting: NodeSetting = {
    side: 'high',
    law: { kind: 'binomial' },
    total: 200_000,
    scale: 250_000,
  };

  it('rounded Chebyshev nodes from low to high, and an interpolant within 1e-9 of exact nodes', () => {
    const low = 100;
    const high = Math.floor(Math.exp(Math.log(low + 1) + PIECE_SPAN) - 1);
    const piece = pieceNodes(setting, low, high, 0.5);
    expect(piece).not.toBeNull();
    const { ks, orders } = piece as NonNullable<typeof piece>;
    expect(ks[0]).toBe(low);
    expect(ks[ks.length - 1]).toBe(high);
    for (let j = 1; j < ks.length; j++) expect(ks[j]).toBeGreaterThan(ks[j - 1]);
    const fit = fitOf(piece as NonNullable<typeof piece>, orders);
    const fitted = new Float64Array(fit.width);
    const exact = new Float64Array(fit.width);
    const node = new Float64Array(FULL);
    // Every count of the piece not a node: the documented check (1e-9 in log tail and
    // relative tail at +-1/2), against exact nodes (themselves checked against mpmath in
    // taylor-nodes.test.ts).
    for (let k = low; k <= high; k++) {
      if (ks.includes(k)) continue;
      expect(nodeAt(setting, k, k - 0.5, node)).toBe(true);
      pack(node, orders, exact, 0);
      smoothValue(fit, k, fitted);
      expect(nodeMiss(fitted, exact, orders, 0.5), `k ${k}`).toBeLessThanOrEqual(1e-9);
    }
  });
});
