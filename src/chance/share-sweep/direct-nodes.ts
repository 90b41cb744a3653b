import {
  bucketBase,
  FULL,
  MAX_ORDER,
  nodeAt,
  type NodeSetting,
  type Orders,
  ordersOf,
  pack,
  packedWidth,
  widerOrders,
} from './taylor-nodes.js';

/** Largest number of parts a direct bucket is cut into. */
const MAX_PARTS = 16;

/** Nodes for every count from `first` to `last`, each bucket cut into `subs[i]` parts. */
export interface DirectPart {
  readonly first: number;
  readonly last: number;
  readonly orders: Orders;
  readonly width: number;
  readonly peak: number;
  readonly subs: Int32Array;
  /** Index of each count's first packed node. */
  readonly offsets: Int32Array;
  readonly nodes: Float64Array;
}

/**
 * Every count a node, each bucket cut into as few parts as make its series settle, for
 * offsets up to half a part plus `extra` (room for a reused table's drift).
 */
export function directPart(
  setting: NodeSetting,
  first: number,
  last: number,
  extra: number,
): DirectPart | null {
  const { side, law } = setting;
  const node = new Float64Array(FULL);
  const counts = last - first + 1;
  const subs = new Int32Array(counts);
  const offsets = new Int32Array(counts + 1);
  const full: Float64Array[] = [];
  let orders: Orders = { b: 1, a: 1 };
  let peak = -Infinity;
  for (let i = 0; i < counts; i++) {
    const k = first + i;
    let done = false;
    for (let sub = 1; sub <= MAX_PARTS && !done; sub *= 2) {
      const parts: Float64Array[] = [];
      let countOrders: Orders = { b: 1, a: 1 };
      for (let part = 0; part < sub; part++) {
        const xc = bucketBase(side, k) + (part + 0.5) / sub;
        if (!nodeAt(setting, k, xc, node)) return null;
        countOrders = ordersOf(node, 0.5 / sub + extra, countOrders);
        parts.push(Float64Array.from(node));
      }
      if (countOrders.b >= MAX_ORDER) continue;
      done = true;
      subs[i] = sub;
      offsets[i + 1] = offsets[i] + sub;
      full.push(...parts);
      for (const v of parts) peak = Math.max(peak, v[0]);
      orders = widerOrders(orders, countOrders);
    }
    if (!done) return null;
  }
  // Binomial sweeps feed tails only: the a-series is all they read when it settles.
  if (law.kind === 'binomial' && orders.a > 0) orders = { b: 0, a: orders.a };
  const width = packedWidth(orders);
  const nodes = new Float64Array(full.length * width);
  full.forEach((v, j) => pack(v, orders, nodes, j * width));
  return { first, last, orders, width, peak, subs, offsets, nodes };
}
