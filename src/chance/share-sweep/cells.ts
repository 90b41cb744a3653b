import {
  fitOf,
  PIECE_SPAN,
  type PieceNodes,
  pieceNodes,
  type SmoothFit,
  smoothValue,
} from './smooth-fit.js';
import {
  nodeMiss,
  type NodeSetting,
  type Orders,
  packedWidth,
  widerOrders,
} from './taylor-nodes.js';

/** A cubic cell off its interpolant by more than this at its midpoint is refused. */
const CELL_CHECK = 1e-8;

/** Relative width of the cubic cells tabulated from the smooth interpolant. */
const TABLE_WIDTH = 0.02;

/** Cubic cells in the threshold from `first` to `last`. */
export interface CellPart {
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
 * Cubic cells over thresholds first..last: the range cut into pieces of at most PIECE_SPAN
 * in log(k + 1), each with its own checked interpolant, and cells of about 2% relative
 * width tabulated from them (each checked against its interpolant at its midpoint).
 */
export function cellPart(
  setting: NodeSetting,
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
    const piece = pieceNodes(setting, bounds[j], bounds[j + 1], reach);
    if (piece === null) return null;
    pieces.push(piece);
    orders = widerOrders(orders, piece.orders);
  }
  // Binomial sweeps feed tails only: the a-series is all they read when it settles.
  if (setting.law.kind === 'binomial' && orders.a > 0) orders = { b: 0, a: orders.a };
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
export function cellValue(part: CellPart, c: number, k: number, out: Float64Array): void {
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
