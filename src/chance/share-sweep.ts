import { logBinomialDensity, logPoissonDensity } from './discrete-densities.js';
import { roundingSlack, type Placement } from './placement.js';
import {
  logBinomialAtLeast,
  logBinomialAtMost,
  logPoissonAtLeast,
  logPoissonAtMost,
} from './tails.js';

/**
 * Sums over many weighted shards of their single-shard tails at one relative load, with no
 * special-function call per shard.
 *
 * The question "does some shard reach t?" gives shard i the threshold k_i = ceil(t N p_i)
 * (side high) or floor(t N p_i) (side low). Every shard with threshold k has its position
 * x_i = t N p_i within one count of it, so its tail is the tail at the middle of that count,
 * x_c = k -+ 1/2, moved by e_i = x_i - x_c (|e_i| <= 1/2) along the law's parameter. The move
 * is a short Taylor series whose coefficients are closed-form:
 * d/dlambda P(Y >= k) = P(Y = k - 1) for Poisson(lambda), and
 * d/dp P(X >= k) = N P(X' = k - 1) with X' ~ Binomial(N - 1, p); each further derivative is
 * a backward difference of the densities (d/dp of a Binomial(M, p) density at j is
 * M [P_{M-1}(j - 1) - P_{M-1}(j)]; d/dlambda of a Poisson density is P(j - 1) - P(j)). So
 *   T(k, x_c + e) = T(k, x_c) (1 + sum_n a_n(k) e^n),  a_n = T^(n) (dtheta/de)^n / (n! T),
 *   log T(k, x_c + e) = g_0(k) + sum_n b_n(k) e^n  (the series of log(1 + A)),
 * each cut where its next term is below 1e-11 at |e| = 1/2. The a-series gives the tail
 * itself (one exponential per threshold, not per shard), the b-series its elasticity; where
 * the a-series does not settle in 16 terms the tail is exp(g_0 + B(e)).
 *
 * g_0, b_n and a_n are smooth in k. Where the thresholds of all shards span few counts,
 * every count is a node (exact tails there; a count's positions are cut into up to 16 parts
 * where the series needs it). Otherwise they are interpolated in log(k + 1) by the
 * barycentric formula through 17 to 65 exact nodes at rounded Chebyshev points (checked
 * against exact nodes halfway between), and tabulated as cubic cells of about 2% relative
 * width (checked against the interpolant at every cell's midpoint). A sweep is refused
 * (null: the grouped engine answers) when the interpolant misses an exact node by more than
 * 1e-9 or a cell its interpolant by more than 1e-8.
 *
 * A sweep costs about 25 exact tails plus a few dozen flops per distinct threshold and per
 * shard; shards are walked in ascending share, so thresholds and cells only move forward.
 * (Method ours; tested against the per-shard tails of tails.ts and the grouped engine.)
 */

export type Side = 'high' | 'low';

/** The law of one shard's count in a sweep. */
export type SweepLaw =
  | { readonly kind: 'binomial' }
  /** Poisson with mean rate * share (the pieces of Levin's representation). */
  | { readonly kind: 'poisson'; readonly rate: number };

/** Weighted shares sorted for sweeping. */
export interface ShareSweep {
  readonly total: number;
  /** Shares in ascending order, all above zero. */
  readonly shares: Float64Array;
  /** prefix[i] = sum of the i smallest shares. */
  readonly prefix: Float64Array;
}

/** Fewer shards than this are left to the grouped engine (exact where affordable). */
export const SWEEP_FROM = 500;

/** Per shares array, the latest total asked about and its sweep (null: not eligible). */
const sweepCache = new WeakMap<Float64Array, { total: number; sweep: ShareSweep | null }>();

/**
 * The sweep of a weighted placement, or null when shares are equal, the shards are few, a
 * share is zero, or the largest share is above 1e-2 (the grouped engine handles those).
 * O(m log m) once per placement (cached).
 */
export function shareSweep(placement: Placement): ShareSweep | null {
  const shares = placement.shares;
  if (shares === null || placement.shardCount < SWEEP_FROM) return null;
  const cached = sweepCache.get(shares);
  if (cached !== undefined) {
    // Whether a sweep applies depends on the shares alone; a new total reuses their order.
    if (cached.sweep === null || cached.total === placement.total) return cached.sweep;
    const sweep = { ...cached.sweep, total: placement.total };
    sweepCache.set(shares, { total: placement.total, sweep });
    return sweep;
  }
  const sorted = Float64Array.from(shares).sort();
  const sweep =
    sorted[0] > 0 && sorted[sorted.length - 1] <= 1e-2
      ? { total: placement.total, shares: sorted, prefix: prefixSums(sorted) }
      : null;
  sweepCache.set(shares, { total: placement.total, sweep });
  return sweep;
}

function prefixSums(values: Float64Array): Float64Array {
  const prefix = new Float64Array(values.length + 1);
  for (let i = 0; i < values.length; i++) prefix[i + 1] = prefix[i] + values[i];
  return prefix;
}

/**
 * At a fixed relative load a shard's tail falls as its share grows (on both sides: the
 * relative spread of its count shrinks as 1 / sqrt(N p)), up to the lattice wobble of one
 * count. So a walk in ascending share can stop once a tail is this far (in log) below the
 * largest so far: each shard left out is below e^-40 of that tail.
 */
export const PRUNE_EXACT = 40;
/** A looser margin for bracketing a quantile (answers are settled with PRUNE_EXACT). */
export const PRUNE_QUICK = 15;

/** The threshold of a shard whose threshold position is x, rounded as the grouped engine does. */
export function thresholdAt(side: Side, x: number): number {
  return side === 'high' ? Math.ceil(x - roundingSlack(x)) : Math.floor(x + roundingSlack(x));
}

/** Largest Taylor order in e. */
const MAX_ORDER = 16;
/** A term of an e-series below this (at the largest |e|) ends it. */
const SERIES_TAIL = 1e-11;
/** Thresholds spanning at most this many counts make every count a node. */
const DIRECT_COUNTS = 48;
/** Largest number of parts a direct bucket is cut into. */
const MAX_PARTS = 16;
/** Interpolants tried, by number of Chebyshev intervals. */
const SMOOTH_DEGREES = [16, 32, 64];
/** An interpolant off by more than this at a check against exact nodes is refused. */
const CHECK = 1e-9;
/** A cubic cell off its interpolant by more than this at its midpoint is refused. */
const CELL_CHECK = 1e-8;
/** Relative width of the cubic cells tabulated from the smooth interpolant. */
const TABLE_WIDTH = 0.02;

/** A full node: [g_0, b_1..b_MAX, a_1..a_MAX]. */
const FULL = 1 + 2 * MAX_ORDER;

const densityScratch = new Float64Array(MAX_ORDER * MAX_ORDER);

/**
 * The full node at threshold k and expansion centre xc (a position), or false when a
 * density or tail is not finite (the sweep is then refused).
 */
function nodeAt(
  side: Side,
  law: SweepLaw,
  total: number,
  scale: number,
  k: number,
  xc: number,
  out: Float64Array,
): boolean {
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
interface Orders {
  readonly b: number;
  readonly a: number;
}

/** The order a series (at offset `from` of a full node) needs at |e| <= h, or MAX_ORDER. */
function seriesOrder(node: Float64Array, from: number, h: number): number {
  let order = MAX_ORDER;
  while (order > 1 && Math.abs(node[from + order - 1]) * h ** order < SERIES_TAIL) order--;
  return order;
}

function ordersOf(node: Float64Array, h: number, seen: Orders): Orders {
  const b = Math.max(seen.b, seriesOrder(node, 1, h));
  const a = seen.a < 0 ? -1 : seriesOrder(node, 1 + MAX_ORDER, h);
  return { b, a: a < 0 || a >= MAX_ORDER ? -1 : Math.max(seen.a, a) };
}

/** Orders that serve both: the longer of each series (no a-series if either has none). */
function widerOrders(x: Orders, y: Orders): Orders {
  return { b: Math.max(x.b, y.b), a: x.a < 0 || y.a < 0 ? -1 : Math.max(x.a, y.a) };
}

/** Width of a packed node: [g_0, b_1..b_B, a_1..a_A]. */
function packedWidth(orders: Orders): number {
  return 1 + orders.b + Math.max(orders.a, 0);
}

function pack(full: Float64Array, orders: Orders, out: Float64Array, at: number): void {
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
function aSeries(node: ArrayLike<number>, orders: Orders, e: number): number {
  if (orders.a < 0) return Math.exp(bSeries(node, orders, e));
  let s = 0;
  for (let n = orders.a; n >= 1; n--) s = (s + node[orders.b + n]) * e;
  return 1 + s;
}

/** Largest disagreement of two packed nodes at e = +-h (log tail, and tail relative). */
function nodeMiss(x: ArrayLike<number>, y: ArrayLike<number>, orders: Orders, h: number): number {
  return Math.max(
    Math.abs(x[0] - y[0]),
    Math.abs(bSeries(x, orders, h) - bSeries(y, orders, h)),
    Math.abs(bSeries(x, orders, -h) - bSeries(y, orders, -h)),
    Math.abs(aSeries(x, orders, h) / aSeries(y, orders, h) - 1),
    Math.abs(aSeries(x, orders, -h) / aSeries(y, orders, -h) - 1),
  );
}

/** Where a count's bucket of positions starts: (k - 1, k] on side high, [k, k + 1) on side low. */
function bucketBase(side: Side, k: number): number {
  return side === 'high' ? k - 1 : k;
}

/** Nodes for every count from `first` to `last`, each bucket cut into `subs[i]` parts. */
interface DirectPart {
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

/** Cubic cells in the threshold from `first` to `last`. */
interface CellPart {
  readonly first: number;
  readonly last: number;
  readonly orders: Orders;
  readonly width: number;
  readonly peak: number;
  /** Thresholds, up to 2^53: not an Int32Array (N = 2^53 - 1 puts them near 1e11). */
  readonly starts: Float64Array;
  /** The Newton nodes y1, y2 (offsets from the start). */
  readonly y1: Float64Array;
  readonly y2: Float64Array;
  /** Per cell and packed component, f0, d1, d2, d3 (Newton form). */
  readonly newton: Float64Array;
}

/**
 * The coefficients of one sweep: thresholds below `split` from direct nodes, the rest from
 * cells; on side high the count 1 from its closed form when `one` (1 - e^-mean, or
 * 1 - (1 - p)^N: its log is singular at mean 0, which lies at the edge of its bucket).
 */
interface Coefficients {
  /** The relative load the table was built at (positions e are measured at it). */
  readonly relative: number;
  /** The largest |e| its cell series are good for (1/2, or 2 for a table reused nearby). */
  readonly reach: number;
  readonly first: number;
  readonly last: number;
  readonly split: number;
  readonly one: boolean;
  readonly direct: DirectPart | null;
  readonly cells: CellPart | null;
  /** Largest g_0 over the exact nodes (the scale of the sums). */
  readonly peak: number;
}

/**
 * Every count a node, each bucket cut into as few parts as make its series settle, for
 * offsets up to half a part plus `extra` (room for a reused table's drift).
 */
function directPart(
  side: Side,
  law: SweepLaw,
  total: number,
  scale: number,
  first: number,
  last: number,
  extra: number,
): DirectPart | null {
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
        if (!nodeAt(side, law, total, scale, k, xc, node)) return null;
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

/**
 * A smooth interpolant of packed nodes over thresholds: barycentric interpolation in
 * v = log(k + 1) through exact nodes at Chebyshev points of the second kind rounded to whole
 * counts (Berrut and Trefethen 2004, "Barycentric Lagrange interpolation", SIAM Review
 * 46(3); the weights for arbitrary distinct nodes, their formula 3.3).
 */
interface SmoothFit {
  /** Nodes, scaled to [-1, 1]. */
  readonly at: Float64Array;
  readonly weights: Float64Array;
  /** Packed node values, `width` numbers each. */
  readonly values: Float64Array;
  readonly width: number;
  readonly centre: number;
  readonly radius: number;
}

function smoothValue(fit: SmoothFit, k: number, out: Float64Array): void {
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
const PIECE_SPAN = 1.2;

/** Exact full nodes of one piece at rounded Chebyshev points, with their orders. */
interface PieceNodes {
  readonly ks: number[];
  readonly full: Float64Array[];
  readonly orders: Orders;
  readonly peak: number;
  readonly centre: number;
  readonly radius: number;
}

function fitOf(piece: PieceNodes, orders: Orders): SmoothFit {
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
function pieceNodes(
  side: Side,
  law: SweepLaw,
  total: number,
  scale: number,
  low: number,
  high: number,
  reach: number,
): PieceNodes | null {
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
      if (!nodeAt(side, law, total, scale, k, centreOf(k), node)) return null;
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
      if (!nodeAt(side, law, total, scale, k, centreOf(k), node)) return null;
      pack(node, orders, exact, 0);
      smoothValue(fit, k, fitted);
      miss = Math.max(miss, nodeMiss(fitted, exact, orders, reach));
    }
    if (miss <= CHECK) return piece;
  }
  return null;
}

/**
 * Cubic cells over thresholds first..last: the range cut into pieces of at most PIECE_SPAN
 * in log(k + 1), each with its own checked interpolant, and cells of about 2% relative
 * width tabulated from them (each checked against its interpolant at its midpoint).
 */
function cellPart(
  side: Side,
  law: SweepLaw,
  total: number,
  scale: number,
  first: number,
  last: number,
  reach: number,
): CellPart | null {
  const bounds = [first];
  while (bounds[bounds.length - 1] < last) {
    const low = bounds[bounds.length - 1];
    const next = Math.max(low + 24, Math.floor(Math.exp(Math.log(low + 1) + PIECE_SPAN) - 1));
    bounds.push(next >= last - 12 ? last : next);
  }
  const pieces: PieceNodes[] = [];
  let orders: Orders = { b: 1, a: 1 };
  for (let j = 0; j + 1 < bounds.length; j++) {
    const piece = pieceNodes(side, law, total, scale, bounds[j], bounds[j + 1], reach);
    if (piece === null) return null;
    pieces.push(piece);
    orders = widerOrders(orders, piece.orders);
  }
  // Binomial sweeps feed tails only: the a-series is all they read when it settles.
  if (law.kind === 'binomial' && orders.a > 0) orders = { b: 0, a: orders.a };
  const starts: number[] = [];
  const y1: number[] = [];
  const y2: number[] = [];
  const newton: number[] = [];
  for (let j = 0; j < pieces.length; j++) {
    const fit = fitOf(pieces[j], orders);
    let done = false;
    for (let cellWidth = TABLE_WIDTH; cellWidth > TABLE_WIDTH / 16 && !done; cellWidth /= 2)
      done = tabulate(fit, orders, reach, bounds[j], bounds[j + 1], cellWidth, {
        starts,
        y1,
        y2,
        newton,
      });
    if (!done) return null;
  }
  return {
    first,
    last,
    orders,
    width: packedWidth(orders),
    peak: Math.max(...pieces.map((piece) => piece.peak)),
    starts: Float64Array.from(starts),
    y1: Float64Array.from(y1),
    y2: Float64Array.from(y2),
    newton: Float64Array.from(newton),
  };
}

/** Cell boundaries from `first` to `last` of the given relative width (at least 3 counts). */
function cellStarts(first: number, last: number, width: number): number[] {
  const starts: number[] = [];
  let k = first;
  while (k < last) {
    starts.push(k);
    const next = k + Math.max(3, Math.round(width * Math.max(k, 1)));
    k = next >= last - 2 ? last : next;
  }
  return starts;
}

/**
 * Cubic cells over [first, last] from a smooth interpolant, appended to `out`; false (and
 * `out` as it was) when a cell misses the interpolant at its midpoint by more than
 * CELL_CHECK.
 */
function tabulate(
  fit: SmoothFit,
  orders: Orders,
  reach: number,
  first: number,
  last: number,
  relativeWidth: number,
  out: { starts: number[]; y1: number[]; y2: number[]; newton: number[] },
): boolean {
  const width = fit.width;
  const starts = cellStarts(first, last, relativeWidth);
  const newton: number[] = [];
  const y1: number[] = [];
  const y2: number[] = [];
  let f0 = new Float64Array(width);
  const f1 = new Float64Array(width);
  const f2 = new Float64Array(width);
  let f3 = new Float64Array(width);
  const fitted = new Float64Array(width);
  const cubic = new Float64Array(width);
  smoothValue(fit, first, f0);
  for (let c = 0; c < starts.length; c++) {
    const start = starts[c];
    const end = c + 1 < starts.length ? starts[c + 1] : last;
    const a = Math.round((end - start) / 3);
    const b = Math.round((2 * (end - start)) / 3);
    const h = end - start;
    y1.push(a);
    y2.push(b);
    smoothValue(fit, start + a, f1);
    smoothValue(fit, start + b, f2);
    smoothValue(fit, end, f3);
    for (let n = 0; n < width; n++) {
      // Newton divided differences through the four nodes 0, a, b, h.
      const d10 = (f1[n] - f0[n]) / a;
      const d11 = (f2[n] - f1[n]) / (b - a);
      const d12 = (f3[n] - f2[n]) / (h - b);
      const d20 = (d11 - d10) / b;
      const d21 = (d12 - d11) / (h - a);
      newton.push(f0[n], d10, d20, (d21 - d20) / h);
    }
    const swap = f0;
    f0 = f3;
    f3 = swap;
    const mid = Math.round((start + end) / 2);
    if (mid === start + a || mid === start + b) continue;
    smoothValue(fit, mid, fitted);
    const y = mid - start;
    for (let n = 0; n < width; n++) {
      const q = newton.length - 4 * width + 4 * n;
      cubic[n] =
        newton[q] + y * (newton[q + 1] + (y - a) * (newton[q + 2] + (y - b) * newton[q + 3]));
    }
    if (!(nodeMiss(fitted, cubic, orders, reach) <= CELL_CHECK)) return false;
  }
  out.starts.push(...starts);
  out.y1.push(...y1);
  out.y2.push(...y2);
  out.newton.push(...newton);
  return true;
}

/** The packed node of threshold k from cell c. */
function cellValue(part: CellPart, c: number, k: number, out: Float64Array): void {
  const y = k - part.starts[c];
  const y1 = part.y1[c];
  const y2 = part.y2[c];
  const newton = part.newton;
  for (let n = 0; n < part.width; n++) {
    const b = (c * part.width + n) * 4;
    out[n] =
      newton[b] + y * (newton[b + 1] + (y - y1) * (newton[b + 2] + (y - y2) * newton[b + 3]));
  }
}

/** Tails this far (in log) below the smallest share's are left out of tables and walks. */
const USEFUL_MARGIN = PRUNE_EXACT + 10;

/** log P(reaching threshold k) for one shard of share p, exactly (tails.ts). */
function exactLogTail(side: Side, law: SweepLaw, total: number, k: number, share: number): number {
  if (law.kind === 'poisson') {
    const mean = law.rate * share;
    return side === 'high' ? logPoissonAtLeast(k, mean) : logPoissonAtMost(k, mean);
  }
  return side === 'high' ? logBinomialAtLeast(k, total, share) : logBinomialAtMost(k, total, share);
}

/**
 * The largest threshold worth a table: tails fall as shares grow (see PRUNE_EXACT), so the
 * first shard, in ascending share, whose exact tail is USEFUL_MARGIN below the smallest
 * share's is found by bisection (about 17 exact tails at m = 1e5), and its threshold ends the
 * table; walks stop there. Without it a universe whose shares span many decades would
 * tabulate thresholds whose log tails are near -1e7, where rounding alone exceeds the checks.
 */
function usefulLast(side: Side, law: SweepLaw, sweep: ShareSweep, relative: number): number {
  const shares = sweep.shares;
  const total = sweep.total;
  const thresholdOf = (i: number) => thresholdAt(side, relative * (total * shares[i]));
  const logTail = (i: number) => exactLogTail(side, law, total, thresholdOf(i), shares[i]);
  const floor = logTail(0) - USEFUL_MARGIN;
  let high = shares.length - 1;
  if (!(logTail(high) < floor)) return thresholdOf(high);
  let low = 0;
  while (high - low > 1) {
    const mid = (low + high) >> 1;
    if (logTail(mid) >= floor) low = mid;
    else high = mid;
  }
  return thresholdOf(high);
}

/** Reach of a table built to be reused at nearby loads (accurate binomial sweeps). */
const REUSE_REACH = 2;
/** Room a reused table's direct nodes keep beyond half a part for drifting positions. */
const DIRECT_DRIFT = 0.05;
/** Thresholds below this are direct nodes when the range is wider than DIRECT_COUNTS. */
const SPLIT_COUNT = 64;

const reusable = new WeakMap<ShareSweep, { high?: Coefficients; low?: Coefficients }>();

/**
 * The coefficients for one sweep. Accurate binomial sweeps (a quantile search settling its
 * answer probes loads within about 1e-4 of each other) share one table: a shard's tail
 * T(k, p) does not depend on the load, only its threshold does, so a table built at load t0
 * with series good for |e| <= 2 (cells) or half a part plus 0.05 (direct nodes) serves any
 * load t at which every shard's offset from its bucket centre, measured at t0, stays within
 * that, i.e. 1/2 + x_max |t / t0 - 1| <= 2 and split |t / t0 - 1| <= 0.05, and whose
 * thresholds stay inside the table. Null when a part is refused, or on side high
 * when some threshold is 0 (that shard surely reaches it; the caller says so).
 */
function prepare(
  side: Side,
  law: SweepLaw,
  sweep: ShareSweep,
  relative: number,
  reuse: boolean,
): Coefficients | null {
  const shares = sweep.shares;
  const total = sweep.total;
  const scale = relative * total;
  if (!(scale > 0)) return null;
  const first = thresholdAt(side, relative * (total * shares[0]));
  // Thresholds must sit inside the law's support with room for the differences.
  if (side === 'high' && first < 1) return null;
  if (side === 'low' && first < 0) return null;
  const last = usefulLast(side, law, sweep, relative);
  if (last > total - MAX_ORDER - 2) return null;
  const kept = reuse ? reusable.get(sweep)?.[side] : undefined;
  if (kept !== undefined && first >= kept.first && last <= kept.last) {
    // Positions drift by x |t / t0 - 1|: at most the split's count in the direct part, the
    // largest share's position in the cells.
    const change = Math.abs(relative / kept.relative - 1);
    const cellsDrift = kept.relative * total * shares[shares.length - 1] * change;
    if (
      (kept.cells === null || 0.5 + cellsDrift <= kept.reach) &&
      kept.split * change <= DIRECT_DRIFT
    )
      return kept;
  }
  const build = (reach: number, extra: number, low: number, high: number): Coefficients | null => {
    const one = side === 'high' && low === 1;
    // Direct nodes below SPLIT_COUNT, cells above; all direct when cells would be few.
    const cut = Math.max(low, SPLIT_COUNT);
    const split = high - low + 1 <= DIRECT_COUNTS || high - cut < 64 ? high + 1 : cut;
    const directFirst = one ? 2 : low;
    const direct =
      directFirst < split
        ? directPart(side, law, total, scale, directFirst, split - 1, extra)
        : null;
    if (directFirst < split && direct === null) return null;
    const cells = split <= high ? cellPart(side, law, total, scale, split, high, reach) : null;
    if (split <= high && cells === null) return null;
    return {
      relative,
      reach,
      first: low,
      last: high,
      split,
      one,
      direct,
      cells,
      peak: Math.max(direct?.peak ?? -Infinity, cells?.peak ?? -Infinity, one ? 0 : -Infinity),
    };
  };
  if (reuse) {
    // Room for the thresholds to move by a few counts while the table is reused.
    const low = Math.max(side === 'high' ? 1 : 0, first - 3);
    const co = build(REUSE_REACH, DIRECT_DRIFT, low, Math.min(total - MAX_ORDER - 2, last + 3));
    if (co !== null) {
      const entry = reusable.get(sweep) ?? {};
      entry[side] = co;
      reusable.set(sweep, entry);
      return co;
    }
  }
  return build(0.5, 0, first, last);
}

/** What a binomial sweep returns: the first Bonferroni sum and what its pair estimate needs. */
export interface TailSums {
  /** log sum_i P(X_i reaches its threshold). */
  readonly logSum: number;
  /** log sum_i P(...)^2. */
  readonly logSumSquares: number;
  /** The two shards with the largest tails: share, threshold and log tail. */
  readonly top: readonly { share: number; threshold: number; logTail: number }[];
  /** Some shard reaches its threshold surely. */
  readonly certain: boolean;
}

/** What a Poisson sweep returns: the pieces of Levin's representation of "no shard reaches". */
export interface CutSums {
  /** log prod_i P(Y_i does not reach its threshold). */
  readonly logMassSum: number;
  /** Sums over the shards of the first six cumulants of the cut Y_i. */
  readonly cumulants: Float64Array;
  /** Some cut holds nothing (a shard always reaches): the box is empty. */
  readonly empty: boolean;
  /** sum_i u0_i = sum_i mean_i dT_i/dmean_i / mass_i: minus d(log mass sum) / d(log s). */
  readonly uSum: number;
  /** sum_i |u0_i| (|elasticity_i| + 1): about the size of d(sum u0) / d(log s). */
  readonly uSpread: number;
  /** sum_i P(Y_i reaches its threshold): the Poisson twin of the first Bonferroni sum. */
  readonly tailSum: number;
}

/** Running sums of a binomial walk; tails are kept as multiples of e^reference. */
interface TailAccumulator {
  reference: number;
  sum: number;
  squares: number;
  first: number;
  firstTail: number;
  firstK: number;
  second: number;
  secondTail: number;
  secondK: number;
}

/** Running sums of a Poisson walk. */
interface CutAccumulator {
  readonly rate: number;
  /** edge + 1 - k: 0 on side high (ceiling k - 1), 1 on side low (floor k + 1). */
  readonly edgeShift: number;
  logMassSum: number;
  means: number;
  readonly u: Float64Array;
  empty: boolean;
  uSpread: number;
  tailSum: number;
}

function addTail(acc: TailAccumulator, i: number, k: number, scaled: number): void {
  acc.sum += scaled;
  acc.squares += scaled * scaled;
  rankTail(acc, i, k, scaled);
}

/** Keep shard i among the two largest tails seen. */
function rankTail(acc: TailAccumulator, i: number, k: number, scaled: number): void {
  if (scaled > acc.secondTail) {
    if (scaled > acc.firstTail) {
      acc.second = acc.first;
      acc.secondTail = acc.firstTail;
      acc.secondK = acc.firstK;
      acc.first = i;
      acc.firstTail = scaled;
      acc.firstK = k;
    } else {
      acc.second = i;
      acc.secondTail = scaled;
      acc.secondK = k;
    }
  }
}

/**
 * A Poisson shard's cut into Levin's sums: its log mass and the Taylor coefficients
 * u_0..u_5 of the Riccati solution of truncated-poisson.ts (cutCumulants), written out for
 * six orders: u' = u (edge + 1 - mean e^t + u), u_0 = mean dT/dmean / mass.
 */
function addCut(
  acc: CutAccumulator,
  share: number,
  k: number,
  tail: number,
  elasticity: number,
): void {
  if (!(tail < 1)) {
    acc.empty = true;
    return;
  }
  const mass = 1 - tail;
  acc.tailSum += tail;
  // log(1 - T): four terms of its series are exact to rounding below 1e-4.
  acc.logMassSum +=
    tail < 1e-4 ? -tail * (1 + tail * (0.5 + tail * (1 / 3 + tail * 0.25))) : Math.log1p(-tail);
  const mean = acc.rate * share;
  acc.means += mean;
  const e1 = k + acc.edgeShift;
  const u0 = (tail * elasticity) / mass;
  acc.uSpread += Math.abs(u0) * (Math.abs(elasticity) + 1);
  const u1 = e1 * u0 - mean * u0 + u0 * u0;
  const u2 = (e1 * u1 - (mean * u1 + mean * u0) + 2 * u0 * u1) / 2;
  const u3 = (e1 * u2 - (mean * u2 + mean * u1 + (mean / 2) * u0) + (2 * u0 * u2 + u1 * u1)) / 3;
  const u4 =
    (e1 * u3 -
      (mean * u3 + mean * u2 + (mean / 2) * u1 + (mean / 6) * u0) +
      (2 * u0 * u3 + 2 * u1 * u2)) /
    4;
  const u5 =
    (e1 * u4 -
      (mean * u4 + mean * u3 + (mean / 2) * u2 + (mean / 6) * u1 + (mean / 24) * u0) +
      (2 * u0 * u4 + 2 * u1 * u3 + u2 * u2)) /
    5;
  const u = acc.u;
  u[0] += u0;
  u[1] += u1;
  u[2] += u2;
  u[3] += u3;
  u[4] += u4;
  u[5] += u5;
}

/**
 * One pass over the shards in ascending share: each shard's threshold and tail (and, for
 * cuts, the tail's elasticity theta dlog T/dtheta = x B'(e), since de/dtheta = x/theta),
 * handed to the accumulator. At relative load 0 (side low, every threshold 0) the tails are
 * direct: (1 - p)^N for the binomial, e^-mean for the Poisson; so is the count 1 on side
 * high. The walk stops at the first threshold whose g_0 is `margin` below the largest so
 * far (see PRUNE_EXACT) and returns how many shards it walked; null when the sweep refuses.
 */
function walk(
  side: Side,
  law: SweepLaw,
  sweep: ShareSweep,
  relative: number,
  margin: number,
  tails: TailAccumulator | null,
  cuts: CutAccumulator | null,
  given: Coefficients | null = null,
  store: TailState | null = null,
): number | null {
  const shares = sweep.shares;
  const total = sweep.total;
  const rate = law.kind === 'poisson' ? law.rate : 0;
  if (side === 'low' && relative === 0) {
    const logTailOf = (share: number) =>
      law.kind === 'poisson' ? -rate * share : total * Math.log1p(-share);
    const peak = logTailOf(shares[0]);
    if (tails) tails.reference = peak;
    for (let i = 0; i < shares.length; i++) {
      const logTail = logTailOf(shares[i]);
      if (logTail < peak - margin) return i;
      if (tails) addTail(tails, i, 0, Math.exp(logTail - peak));
      if (cuts) addCut(cuts, shares[i], 0, Math.exp(logTail), logTail);
    }
    return shares.length;
  }
  const co =
    given ?? prepare(side, law, sweep, relative, law.kind === 'binomial' && margin >= PRUNE_EXACT);
  if (co === null) return null;
  // Positions e are measured at the table's own load.
  const tableRelative = co.relative;
  const reference = tails ? co.peak : 0;
  if (tails) tails.reference = reference;
  const high = side === 'high';
  const base0 = high ? -1 : 0;
  const direct = co.direct;
  const cellsPart = co.cells;
  const split = co.split;
  const cells = cellsPart ? cellsPart.starts.length : 0;
  const node = new Float64Array(FULL);
  // The current node's orders (direct nodes and cells may keep different ones).
  let bOrder = 0;
  let aOrder = 0;
  let unrolled = false;
  let a1 = 0;
  let a2 = 0;
  let a3 = 0;
  let a4 = 0;
  let a5 = 0;
  let a6 = 0;
  let a7 = 0;
  let a8 = 0;
  let b1 = 0;
  let b2 = 0;
  let b3 = 0;
  let b4 = 0;
  let b5 = 0;
  let b6 = 0;
  let lastG0 = NaN;
  // The tails accumulator's sums, kept in locals through the loop.
  let sum = 0;
  let squares = 0;
  let first = -1;
  let firstTail = -1;
  let firstK = 0;
  let second = -1;
  let secondTail = -1;
  let secondK = 0;
  let c = 0;
  let next = cells > 1 ? cellsPart!.starts[1] : Infinity;
  let nodeK = -1;
  let nodePart = -1;
  let scale = 0;
  let peak = -Infinity;
  for (let i = 0; i < shares.length; i++) {
    const share = shares[i];
    const x = relative * (total * share);
    const k = high ? Math.ceil(x - roundingSlack(x)) : Math.floor(x + roundingSlack(x));
    let tail: number;
    let elasticity = 0;
    if (k > co.last) {
      // Beyond the table: every later shard's tail is far below the largest (usefulLast).
      if (store) store.count = i;
      if (tails)
        storeTails(tails, sum, squares, first, firstTail, firstK, second, secondTail, secondK);
      return i;
    }
    if (k === 1 && co.one) {
      // P(X >= 1) = 1 - (1 - p)^N, P(Y >= 1) = 1 - e^-mean.
      const mean = rate * share;
      const t =
        law.kind === 'poisson' ? -Math.expm1(-mean) : -Math.expm1(total * Math.log1p(-share));
      if (Math.log(t) > peak) peak = Math.log(t);
      tail = t * Math.exp(-reference);
      if (cuts) elasticity = (mean * Math.exp(-mean)) / t;
      nodeK = -1;
    } else {
      let centre: number;
      let changed = false;
      if (k < split) {
        const part = direct!;
        const j = k - part.first;
        const sub = part.subs[j];
        const from = k + base0;
        const x0 = tableRelative * (total * share);
        const piece = Math.min(sub - 1, Math.max(0, Math.floor((x0 - from) * sub)));
        centre = from + (piece + 0.5) / sub;
        if (k !== nodeK || piece !== nodePart) {
          const at = (part.offsets[j] + piece) * part.width;
          for (let n = 0; n < part.width; n++) node[n] = part.nodes[at + n];
          bOrder = part.orders.b;
          aOrder = part.orders.a;
          nodeK = k;
          nodePart = piece;
          changed = true;
        }
      } else {
        const part = cellsPart!;
        centre = k + base0 + 0.5;
        if (k !== nodeK) {
          while (k >= next) {
            c++;
            next = c + 1 < cells ? part.starts[c + 1] : Infinity;
          }
          const y = k - part.starts[c];
          const y1 = part.y1[c];
          const y2 = part.y2[c];
          const newton = part.newton;
          const width = part.width;
          // A tails walk with an a-series reads g_0 and the a-series only.
          const skipB = cuts === null && part.orders.a > 0 ? part.orders.b : 0;
          for (let n = 0; n < width; n = n === 0 ? n + 1 + skipB : n + 1) {
            const b = (c * width + n) * 4;
            node[n] =
              newton[b] +
              y * (newton[b + 1] + (y - y1) * (newton[b + 2] + (y - y2) * newton[b + 3]));
          }
          bOrder = part.orders.b;
          aOrder = part.orders.a;
          nodeK = k;
          nodePart = -1;
          changed = true;
        }
      }
      if (changed) {
        const g0 = node[0];
        if (g0 > peak) peak = g0;
        else if (g0 < peak - margin) {
          if (store) store.count = i;
          if (tails)
            storeTails(tails, sum, squares, first, firstTail, firstK, second, secondTail, secondK);
          return i;
        }
        // Neighbouring thresholds differ little in g_0: e^d from seven terms of its series
        // (relative error below 3e-16 for |d| <= 0.02), so one exponential per cell or jump.
        const d = g0 - lastG0;
        scale =
          d > -0.02 && d < 0.02
            ? scale *
              (1 + d * (1 + d * (0.5 + d * (1 / 6 + d * (1 / 24 + d * (1 / 120 + d / 720))))))
            : Math.exp(g0 - reference);
        lastG0 = g0;
        unrolled = aOrder > 0 && aOrder <= 8 && bOrder <= 6;
        if (unrolled) {
          // Short series: coefficients in locals, zeros past their orders.
          a1 = aOrder >= 1 ? node[bOrder + 1] : 0;
          a2 = aOrder >= 2 ? node[bOrder + 2] : 0;
          a3 = aOrder >= 3 ? node[bOrder + 3] : 0;
          a4 = aOrder >= 4 ? node[bOrder + 4] : 0;
          a5 = aOrder >= 5 ? node[bOrder + 5] : 0;
          a6 = aOrder >= 6 ? node[bOrder + 6] : 0;
          a7 = aOrder >= 7 ? node[bOrder + 7] : 0;
          a8 = aOrder >= 8 ? node[bOrder + 8] : 0;
          if (cuts) {
            b1 = bOrder >= 1 ? node[1] : 0;
            b2 = bOrder >= 2 ? 2 * node[2] : 0;
            b3 = bOrder >= 3 ? 3 * node[3] : 0;
            b4 = bOrder >= 4 ? 4 * node[4] : 0;
            b5 = bOrder >= 5 ? 5 * node[5] : 0;
            b6 = bOrder >= 6 ? 6 * node[6] : 0;
          }
        }
      }
      const e = tableRelative * (total * share) - centre;
      let factor: number;
      let slope = 0;
      if (unrolled) {
        // Estrin's scheme: the same polynomial with a dependency depth of four, not eight.
        const e2 = e * e;
        factor =
          1 +
          e * (a1 + a2 * e + (a3 + a4 * e) * e2 + (a5 + a6 * e + (a7 + a8 * e) * e2) * (e2 * e2));
        if (cuts) slope = b1 + e * (b2 + e * (b3 + e * (b4 + e * (b5 + e * b6))));
      } else {
        if (aOrder > 0) {
          let s = node[bOrder + aOrder];
          for (let n = aOrder - 1; n >= 1; n--) s = s * e + node[bOrder + n];
          factor = 1 + s * e;
        } else {
          let s = 0;
          for (let n = bOrder; n >= 1; n--) s = (s + node[n]) * e;
          factor = Math.exp(s);
        }
        if (cuts) {
          slope = bOrder * node[bOrder];
          for (let n = bOrder - 1; n >= 1; n--) slope = slope * e + n * node[n];
        }
      }
      tail = scale * factor;
      elasticity = tableRelative * (total * share) * slope;
    }
    if (store) {
      store.threshold[i] = k;
      store.tail[i] = tail;
    }
    if (tails) {
      sum += tail;
      squares += tail * tail;
      if (tail > secondTail) {
        if (tail > firstTail) {
          second = first;
          secondTail = firstTail;
          secondK = firstK;
          first = i;
          firstTail = tail;
          firstK = k;
        } else {
          second = i;
          secondTail = tail;
          secondK = k;
        }
      }
    }
    if (cuts) addCut(cuts, share, k, tail, elasticity);
  }
  if (store) store.count = shares.length;
  if (tails) storeTails(tails, sum, squares, first, firstTail, firstK, second, secondTail, secondK);
  return shares.length;
}

function storeTails(
  acc: TailAccumulator,
  sum: number,
  squares: number,
  first: number,
  firstTail: number,
  firstK: number,
  second: number,
  secondTail: number,
  secondK: number,
): void {
  acc.sum = sum;
  acc.squares = squares;
  acc.first = first;
  acc.firstTail = firstTail;
  acc.firstK = firstK;
  acc.second = second;
  acc.secondTail = secondTail;
  acc.secondK = secondK;
}

/**
 * The thresholds and tails (as multiples of e^peak) of the latest accurate binomial sweep
 * on a reusable table, so that the next sweep on the same table only revisits the shards
 * whose threshold moved (about N |t2 - t1| of them).
 */
interface TailState {
  readonly co: Coefficients;
  count: number;
  readonly threshold: Float64Array;
  readonly tail: Float64Array;
  sum: number;
  squares: number;
}

const tailStates = new WeakMap<ShareSweep, { high?: TailState; low?: TailState }>();

/**
 * Binomial sweep: the first Bonferroni sum S1 = sum_i P(X_i reaches its threshold) and what
 * the pair estimate of S2 needs, X_i ~ Binomial(N, p_i). Null when the sweep cannot be
 * trusted (the grouped engine then answers). O(nodes + m); on a table kept from the
 * previous accurate sweep, O(m) threshold comparisons plus a table lookup per moved shard.
 */
export function sweepTails(
  side: Side,
  sweep: ShareSweep,
  relative: number,
  margin = PRUNE_EXACT,
): TailSums | null {
  const acc: TailAccumulator = {
    reference: 0,
    sum: 0,
    squares: 0,
    first: -1,
    firstTail: -1,
    firstK: 0,
    second: -1,
    secondTail: -1,
    secondK: 0,
  };
  const law: SweepLaw = { kind: 'binomial' };
  const accurate = margin >= PRUNE_EXACT && !(side === 'low' && relative === 0);
  const co = accurate ? prepare(side, law, sweep, relative, true) : null;
  const kept = tailStates.get(sweep)?.[side];
  if (co !== null && kept !== undefined && kept.co === co) {
    updateTails(side, sweep, relative, kept, acc);
  } else {
    let store: TailState | null = null;
    if (co !== null && co === reusable.get(sweep)?.[side]) {
      // The arrays of the state it replaces are reused (two per side and sweep).
      const previous = tailStates.get(sweep)?.[side];
      const m = sweep.shares.length;
      store = {
        co,
        count: 0,
        threshold: previous?.threshold ?? new Float64Array(m),
        tail: previous?.tail ?? new Float64Array(m),
        sum: 0,
        squares: 0,
      };
    }
    const count = walk(side, law, sweep, relative, margin, acc, null, co, store);
    if (count === null) return null;
    if (store) {
      store.sum = acc.sum;
      store.squares = acc.squares;
      const entry = tailStates.get(sweep) ?? {};
      entry[side] = store;
      tailStates.set(sweep, entry);
    }
  }
  if (!Number.isFinite(acc.sum) || acc.first < 0) return null;
  const shard = (i: number, k: number, tail: number) => ({
    share: sweep.shares[i],
    threshold: k,
    logTail: acc.reference + Math.log(tail),
  });
  const first = shard(acc.first, acc.firstK, acc.firstTail);
  const second = acc.second < 0 ? first : shard(acc.second, acc.secondK, acc.secondTail);
  return {
    logSum: acc.reference + Math.log(acc.sum),
    logSumSquares: 2 * acc.reference + Math.log(acc.squares),
    top: [first, second],
    certain: first.logTail >= 0,
  };
}

/**
 * One binomial shard's tail from a table, as a multiple of e^peak, for thresholds visited
 * in ascending order (the cell pointer only moves forward).
 */
class TableLookup {
  private cell = 0;
  private readonly node = new Float64Array(FULL);

  constructor(
    private readonly co: Coefficients,
    private readonly side: Side,
  ) {}

  binomialTail(k: number, share: number, total: number): number {
    const co = this.co;
    if (k === 1 && co.one) return -Math.expm1(total * Math.log1p(-share)) * Math.exp(-co.peak);
    const x0 = co.relative * (total * share);
    const from = k + (this.side === 'high' ? -1 : 0);
    const node = this.node;
    let centre: number;
    let orders: Orders;
    if (k < co.split) {
      const part = co.direct!;
      const j = k - part.first;
      const sub = part.subs[j];
      const piece = Math.min(sub - 1, Math.max(0, Math.floor((x0 - from) * sub)));
      centre = from + (piece + 0.5) / sub;
      const at = (part.offsets[j] + piece) * part.width;
      for (let n = 0; n < part.width; n++) node[n] = part.nodes[at + n];
      orders = part.orders;
    } else {
      const part = co.cells!;
      while (this.cell + 1 < part.starts.length && k >= part.starts[this.cell + 1]) this.cell++;
      cellValue(part, this.cell, k, node);
      centre = from + 0.5;
      orders = part.orders;
    }
    return Math.exp(node[0] - co.peak) * aSeries(node, orders, x0 - centre);
  }
}

/**
 * The kept sweep moved to a new load on the same table: each shard whose threshold changed
 * gets its tail from the table (positions measured at the table's load), the sums change by
 * the differences, and the two largest tails are found again. The shards pruned by the kept
 * sweep stay out (their tails were below e^-40 of the largest and move by a few percent).
 */
function updateTails(
  side: Side,
  sweep: ShareSweep,
  relative: number,
  kept: TailState,
  acc: TailAccumulator,
): void {
  const { co, threshold, tail } = kept;
  const shares = sweep.shares;
  const total = sweep.total;
  const high = side === 'high';
  let sum = kept.sum;
  let squares = kept.squares;
  const lookup = new TableLookup(co, side);
  for (let i = 0; i < kept.count; i++) {
    const x = relative * (total * shares[i]);
    const k = high ? Math.ceil(x - roundingSlack(x)) : Math.floor(x + roundingSlack(x));
    if (k === threshold[i]) continue;
    const value = lookup.binomialTail(k, shares[i], total);
    sum += value - tail[i];
    squares += value * value - tail[i] * tail[i];
    tail[i] = value;
    threshold[i] = k;
  }
  kept.sum = sum;
  kept.squares = squares;
  acc.reference = co.peak;
  acc.sum = sum;
  acc.squares = squares;
  // The two largest tails, in one tight pass.
  let first = -1;
  let firstTail = -1;
  let second = -1;
  let secondTail = -1;
  for (let i = 0; i < kept.count; i++) {
    const value = tail[i];
    if (value > secondTail) {
      if (value > firstTail) {
        second = first;
        secondTail = firstTail;
        first = i;
        firstTail = value;
      } else {
        second = i;
        secondTail = value;
      }
    }
  }
  for (const i of [second, first]) if (i >= 0) rankTail(acc, i, threshold[i], tail[i]);
}

/**
 * Poisson sweep at Levin's rate s: for each shard the cut "does not reach its threshold"
 * of Y_i ~ Poisson(s p_i) (a ceiling at k_i - 1 on side high, a floor at k_i + 1 on side
 * low), its log mass and its first six cumulants, summed. u0 = mean dT/dmean / mass is
 * mean P(Y = k - 1) / P(Y <= k - 1) on side high and -mean P(Y = k) / P(Y >= k + 1) on side
 * low (see addCut). O(nodes + m).
 */
export function sweepCuts(
  side: Side,
  sweep: ShareSweep,
  relative: number,
  rate: number,
): CutSums | null {
  const acc: CutAccumulator = {
    rate,
    edgeShift: side === 'high' ? 0 : 1,
    logMassSum: 0,
    means: 0,
    u: new Float64Array(6),
    empty: false,
    uSpread: 0,
    tailSum: 0,
  };
  const count = walk(side, { kind: 'poisson', rate }, sweep, relative, PRUNE_EXACT, null, acc);
  if (count === null || Number.isNaN(acc.logMassSum)) return null;
  if (acc.empty)
    return {
      logMassSum: -Infinity,
      cumulants: new Float64Array(6),
      empty: true,
      uSum: 0,
      uSpread: 0,
      tailSum: Infinity,
    };
  // kappa_r = mean - (r - 1)! u_{r-1}; a pruned shard's cut holds all but e^-40 of its
  // tail's mass, so it is its plain Poisson law (every cumulant the mean).
  const means = acc.means + rate * (sweep.prefix[sweep.shares.length] - sweep.prefix[count]);
  const u = acc.u;
  const cumulants = Float64Array.of(
    means - u[0],
    means - u[1],
    means - 2 * u[2],
    means - 6 * u[3],
    means - 24 * u[4],
    means - 120 * u[5],
  );
  return {
    logMassSum: acc.logMassSum,
    cumulants,
    empty: false,
    uSum: u[0],
    uSpread: acc.uSpread,
    tailSum: acc.tailSum,
  };
}
