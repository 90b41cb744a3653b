import { logBinomialDensity, logPoissonDensity } from '../discrete-densities.js';
import {
  logBinomialAtLeast,
  logBinomialAtMost,
  logPoissonAtLeast,
  logPoissonAtMost,
} from '../tails.js';
import type { Side, SweepLaw } from './sorted-shares.js';

/**
 * What every exact node of one table shares: the side, the law, the requests in all and
 * the scale from share to position (relative load times total).
 */
export interface NodeSetting {
  readonly side: Side;
  readonly law: SweepLaw;
  readonly total: number;
  readonly scale: number;
}

/** Largest Taylor order in e. */
export const MAX_ORDER = 16;

/** A term of an e-series below this (at the largest |e|) ends it. */
const SERIES_TAIL = 1e-11;

/** A full node: [g_0, b_1..b_MAX, a_1..a_MAX]. */
export const FULL = 1 + 2 * MAX_ORDER;

const densityScratch = new Float64Array(MAX_ORDER * MAX_ORDER);

/**
 * The full node at threshold k and expansion centre xc (a position), or false when a
 * density or tail is not finite (the sweep is then refused).
 */
export function nodeAt(setting: NodeSetting, k: number, xc: number, out: Float64Array): boolean {
  const { side, law, total, scale } = setting;
  const share = xc / scale;
  const sign = side === 'high' ? 1 : -1;
  // The densities differenced: high side from k - 1 down, low side from k down.
  const j0 = side === 'high' ? k - 1 : k;
  let g0: number;
  let logBase: number;
  const density = densityScratch;
  if (law.kind === 'poisson') {
    const mean = law.rate * share;
    g0 = side === 'high' ? logPoissonAtLeast(k, mean) : logPoissonAtMost(k, mean);
    logBase = logPoissonDensity(j0, mean);
    // The same densities for every order: P(j0 - j) = P(j0 - j + 1) (j0 - j + 1) / mean.
    let d = 1;
    for (let j = 0; j < MAX_ORDER; j++) {
      if (j > 0) d *= Math.max(0, j0 - j + 1) / mean;
      for (let n = 1; n <= MAX_ORDER; n++) density[(n - 1) * MAX_ORDER + j] = d;
    }
  } else {
    g0 = side === 'high' ? logBinomialAtLeast(k, total, share) : logBinomialAtMost(k, total, share);
    logBase = logBinomialDensity(j0, total - 1, share);
    const q = 1 - share;
    // Row n holds Binomial(N - n, p) densities at j0 - j, relative to the (N - 1, j0) one:
    // P_{M-1}(i) = P_M(i) (M - i) / (M q) and P_M(i - 1) = P_M(i) i q / ((M - i + 1) p).
    let head = 1;
    for (let n = 1; n <= MAX_ORDER; n++) {
      const trials = total - n;
      if (n > 1) head *= Math.max(0, trials + 1 - j0) / ((trials + 1) * q);
      let d = head;
      for (let j = 0; j < n; j++) {
        if (j > 0) {
          const i = j0 - j + 1;
          d *= (Math.max(0, i) * q) / ((trials - i + 1) * share);
        }
        density[(n - 1) * MAX_ORDER + j] = d;
      }
    }
  }
  if (!Number.isFinite(g0)) return false;
  out[0] = g0;
  const ratio = j0 >= 0 && Number.isFinite(logBase) ? Math.exp(logBase - g0) : 0;
  // a_n: (dtheta/de)^n, times the falling factorial N (N-1)...(N-n+1) for the binomial, over n!.
  const step = law.kind === 'poisson' ? law.rate / scale : 1 / scale;
  const A = 1 + MAX_ORDER;
  let factor = 1;
  for (let n = 1; n <= MAX_ORDER; n++) {
    factor *= (step * (law.kind === 'poisson' ? 1 : total - n + 1)) / n;
    // (E^-1 - 1)^(n-1) applied at j0: sum_j C(n-1, j) (-1)^(n-1-j) P(j0 - j).
    let difference = 0;
    let binomial = 1;
    for (let j = 0; j < n; j++) {
      if (j > 0) binomial = (binomial * (n - j)) / j;
      const term = binomial * density[(n - 1) * MAX_ORDER + j];
      difference += (n - 1 - j) % 2 === 0 ? term : -term;
    }
    out[A + n - 1] = sign * ratio * factor * difference;
  }
  // log(1 + A(e)) = sum b_n e^n: b_n = a_n - (1/n) sum_{j<n} j b_j a_{n-j}.
  for (let n = 1; n <= MAX_ORDER; n++) {
    let convolution = 0;
    for (let j = 1; j < n; j++) convolution += j * out[j] * out[A + n - j - 1];
    out[n] = out[A + n - 1] - convolution / n;
  }
  for (let n = 0; n < FULL; n++) if (!Number.isFinite(out[n])) return false;
  return true;
}

/** Orders kept of the two series: b (log tail) and a (tail; 0 when it does not settle). */
export interface Orders {
  readonly b: number;
  readonly a: number;
}

/** The order a series (at offset `from` of a full node) needs at |e| <= h, or MAX_ORDER. */
function seriesOrder(node: Float64Array, from: number, h: number): number {
  let order = MAX_ORDER;
  while (order > 1 && Math.abs(node[from + order - 1]) * h ** order < SERIES_TAIL) order--;
  return order;
}

export function ordersOf(node: Float64Array, h: number, seen: Orders): Orders {
  const b = Math.max(seen.b, seriesOrder(node, 1, h));
  const a = seen.a < 0 ? -1 : seriesOrder(node, 1 + MAX_ORDER, h);
  return { b, a: a < 0 || a >= MAX_ORDER ? -1 : Math.max(seen.a, a) };
}

/** Orders that serve both: the longer of each series (no a-series if either has none). */
export function widerOrders(x: Orders, y: Orders): Orders {
  return { b: Math.max(x.b, y.b), a: x.a < 0 || y.a < 0 ? -1 : Math.max(x.a, y.a) };
}

/** Width of a packed node: [g_0, b_1..b_B, a_1..a_A]. */
export function packedWidth(orders: Orders): number {
  return 1 + orders.b + Math.max(orders.a, 0);
}

export function pack(full: Float64Array, orders: Orders, out: Float64Array, at: number): void {
  out[at] = full[0];
  for (let n = 1; n <= orders.b; n++) out[at + n] = full[n];
  for (let n = 1; n <= orders.a; n++) out[at + orders.b + n] = full[MAX_ORDER + n];
}

/** B(e) of a packed node. */
function bSeries(node: ArrayLike<number>, orders: Orders, e: number): number {
  let s = 0;
  for (let n = orders.b; n >= 1; n--) s = (s + node[n]) * e;
  return s;
}

/** 1 + A(e) of a packed node (exp(B(e)) when there is no a-series). */
export function aSeries(node: ArrayLike<number>, orders: Orders, e: number): number {
  if (orders.a < 0) return Math.exp(bSeries(node, orders, e));
  let s = 0;
  for (let n = orders.a; n >= 1; n--) s = (s + node[orders.b + n]) * e;
  return 1 + s;
}

/** Largest disagreement of two packed nodes at e = +-h (log tail, and tail relative). */
export function nodeMiss(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  orders: Orders,
  h: number,
): number {
  return Math.max(
    Math.abs(x[0] - y[0]),
    Math.abs(bSeries(x, orders, h) - bSeries(y, orders, h)),
    Math.abs(bSeries(x, orders, -h) - bSeries(y, orders, -h)),
    Math.abs(aSeries(x, orders, h) / aSeries(y, orders, h) - 1),
    Math.abs(aSeries(x, orders, -h) / aSeries(y, orders, -h) - 1),
  );
}

/** Where a count's bucket of positions starts: (k - 1, k] on side high, [k, k + 1) on side low. */
export function bucketBase(side: Side, k: number): number {
  return side === 'high' ? k - 1 : k;
}
