import {
  bucketBase,
  FULL,
  MAX_ORDER,
  nodeAt,
  nodeMiss,
  type NodeSetting,
  type Orders,
  ordersOf,
  pack,
  packedWidth,
} from './taylor-nodes.js';

/** Interpolants tried, by number of Chebyshev intervals. */
const SMOOTH_DEGREES = [16, 32, 64];

/** An interpolant off by more than this at a check against exact nodes is refused. */
const CHECK = 1e-9;

/**
 * A smooth interpolant of packed nodes over thresholds: barycentric interpolation in
 * v = log(k + 1) through exact nodes at Chebyshev points of the second kind rounded to whole
 * counts (Berrut and Trefethen 2004, "Barycentric Lagrange interpolation", SIAM Review
 * 46(3); the weights for arbitrary distinct nodes, their formula 3.3).
 */
export interface SmoothFit {
  /** Nodes, scaled to [-1, 1]. */
  readonly at: Float64Array;
  readonly weights: Float64Array;
  /** Packed node values, `width` numbers each. */
  readonly values: Float64Array;
  readonly width: number;
  readonly centre: number;
  readonly radius: number;
}

export function smoothValue(fit: SmoothFit, k: number, out: Float64Array): void {
  const x = (Math.log(k + 1) - fit.centre) / fit.radius;
  const { at, weights, values, width } = fit;
  out.fill(0, 0, width);
  let denominator = 0;
  for (let j = 0; j < at.length; j++) {
    const d = x - at[j];
    if (d === 0) {
      for (let n = 0; n < width; n++) out[n] = values[j * width + n];
      return;
    }
    const w = weights[j] / d;
    denominator += w;
    for (let n = 0; n < width; n++) out[n] += w * values[j * width + n];
  }
  for (let n = 0; n < width; n++) out[n] /= denominator;
}

/** A piece of the threshold range spans at most this in log(k + 1) (a factor of about 3.3). */
export const PIECE_SPAN = 1.2;

/** Exact full nodes of one piece at rounded Chebyshev points, with their orders. */
export interface PieceNodes {
  readonly ks: number[];
  readonly full: Float64Array[];
  readonly orders: Orders;
  readonly peak: number;
  readonly centre: number;
  readonly radius: number;
}

export function fitOf(piece: PieceNodes, orders: Orders): SmoothFit {
  const width = packedWidth(orders);
  const at = Float64Array.from(piece.ks, (k) => (Math.log(k + 1) - piece.centre) / piece.radius);
  const weights = new Float64Array(at.length);
  for (let j = 0; j < at.length; j++) {
    let product = 1;
    for (let i = 0; i < at.length; i++) if (i !== j) product *= at[j] - at[i];
    weights[j] = 1 / product;
  }
  const values = new Float64Array(at.length * width);
  piece.full.forEach((v, j) => pack(v, orders, values, j * width));
  return { at, weights, values, width, centre: piece.centre, radius: piece.radius };
}

/**
 * Nodes for one piece [low, high] whose interpolant passes the check against exact nodes
 * halfway between its own (at eight places), trying 16, 32 and 64 Chebyshev intervals.
 */
export function pieceNodes(
  setting: NodeSetting,
  low: number,
  high: number,
  reach: number,
): PieceNodes | null {
  const side = setting.side;
  const node = new Float64Array(FULL);
  const centreOf = (k: number) => bucketBase(side, k) + 0.5;
  const centre = (Math.log(low + 1) + Math.log(high + 1)) / 2;
  const radius = (Math.log(high + 1) - Math.log(low + 1)) / 2;
  const countAt = (angle: number) =>
    Math.min(high, Math.max(low, Math.round(Math.exp(centre + radius * Math.cos(angle)) - 1)));
  for (const degree of SMOOTH_DEGREES) {
    const ks: number[] = [];
    for (let j = degree; j >= 0; j--) {
      const k = countAt((Math.PI * j) / degree);
      if (ks.length === 0 || k > ks[ks.length - 1]) ks.push(k);
    }
    const full: Float64Array[] = [];
    let orders: Orders = { b: 1, a: 1 };
    let peak = -Infinity;
    for (const k of ks) {
      if (!nodeAt(setting, k, centreOf(k), node)) return null;
      orders = ordersOf(node, reach, orders);
      peak = Math.max(peak, node[0]);
      full.push(Float64Array.from(node));
    }
    if (orders.b >= MAX_ORDER) return null;
    const piece: PieceNodes = { ks, full, orders, peak, centre, radius };
    const fit = fitOf(piece, orders);
    const fitted = new Float64Array(fit.width);
    const exact = new Float64Array(fit.width);
    let miss = 0;
    for (let q = 0; q < 8; q++) {
      const j = Math.floor((degree * (q + 0.5)) / 8);
      const k = countAt((Math.PI * (j + 0.5)) / degree);
      if (ks.includes(k)) continue;
      if (!nodeAt(setting, k, centreOf(k), node)) return null;
      pack(node, orders, exact, 0);
      smoothValue(fit, k, fitted);
      miss = Math.max(miss, nodeMiss(fitted, exact, orders, reach));
    }
    if (miss <= CHECK) return piece;
  }
  return null;
}
