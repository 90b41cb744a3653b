import { roundingSlack } from '../placement.js';
import {
  addCut,
  addTail,
  type CutAccumulator,
  storeTails,
  type TailAccumulator,
  type TailState,
} from './accumulators.js';
import { type Coefficients, prepare } from './coefficient-table.js';
import { PRUNE_EXACT, type SweepQuery } from './sorted-shares.js';
import { FULL } from './taylor-nodes.js';

/**
 * One pass over the shards in ascending share: each shard's threshold and tail (and, for
 * cuts, the tail's elasticity theta dlog T/dtheta = x B'(e), since de/dtheta = x/theta),
 * handed to the accumulator. At relative load 0 (side low, every threshold 0) the tails are
 * direct: (1 - p)^N for the binomial, e^-mean for the Poisson; so is the count 1 on side
 * high. The walk stops at the first threshold whose g_0 is `margin` below the largest so
 * far (see PRUNE_EXACT) and returns how many shards it walked; null when the sweep refuses.
 */
export function walk(
  query: SweepQuery,
  margin: number,
  tails: TailAccumulator | null,
  cuts: CutAccumulator | null,
  given: Coefficients | null = null,
  store: TailState | null = null,
): number | null {
  const { side, law, sweep, relative } = query;
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
  const co = given ?? prepare(query, law.kind === 'binomial' && margin >= PRUNE_EXACT);
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
