import {
  logBinomialAtLeast,
  logBinomialAtMost,
  logPoissonAtLeast,
  logPoissonAtMost,
} from '../tails.js';
import { type CellPart, cellPart, cellValue } from './cells.js';
import { type DirectPart, directPart } from './direct-nodes.js';
import {
  PRUNE_EXACT,
  type Side,
  type SweepLaw,
  type SweepQuery,
  thresholdAt,
} from './sorted-shares.js';
import { aSeries, FULL, MAX_ORDER, type NodeSetting, type Orders } from './taylor-nodes.js';

/** Thresholds spanning at most this many counts make every count a node. */
const DIRECT_COUNTS = 48;

/**
 * The coefficients of one sweep: thresholds below `split` from direct nodes, the rest from
 * cells; on side high the count 1 from its closed form when `one` (1 - e^-mean, or
 * 1 - (1 - p)^N: its log is singular at mean 0, which lies at the edge of its bucket).
 */
export interface Coefficients {
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
function usefulLast(query: SweepQuery): number {
  const { side, law, sweep, relative } = query;
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

/**
 * The coefficients for one sweep. Accurate binomial sweeps (a quantile search settling its
 * answer probes loads within about 1e-4 of each other) share one table: a shard's tail
 * T(k, p) does not depend on the load, only its threshold does, so a table built at load t0
 * with series good for |e| <= 2 (cells) or half a part plus 0.05 (direct nodes) serves any
 * load t at which every shard's offset from its bucket centre, measured at t0, stays within
 * that, i.e. 1/2 + x_max |t / t0 - 1| <= 2 and split |t / t0 - 1| <= 0.05, and whose
 * thresholds stay inside the table. The shared table is kept on the sweep (`kept`), so it
 * lives as long as the sweep does in its ChanceCache. Null when a part is refused, or on
 * side high when some threshold is 0 (that shard surely reaches it; the caller says so).
 */
export function prepare(query: SweepQuery, reuse: boolean): Coefficients | null {
  const { side, law, sweep, relative } = query;
  const shares = sweep.shares;
  const total = sweep.total;
  const scale = relative * total;
  if (!(scale > 0)) return null;
  const setting: NodeSetting = { side, law, total, scale };
  const first = thresholdAt(side, relative * (total * shares[0]));
  // Thresholds must sit inside the law's support with room for the differences.
  if (side === 'high' && first < 1) return null;
  if (side === 'low' && first < 0) return null;
  const last = usefulLast(query);
  if (last > total - MAX_ORDER - 2) return null;
  const kept = reuse ? sweep.kept[side].table : undefined;
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
    const direct = directFirst < split ? directPart(setting, directFirst, split - 1, extra) : null;
    if (directFirst < split && direct === null) return null;
    const cells = split <= high ? cellPart(setting, split, high, reach) : null;
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
      sweep.kept[side].table = co;
      return co;
    }
  }
  return build(0.5, 0, first, last);
}

/**
 * One binomial shard's tail from a table, as a multiple of e^peak, for thresholds visited
 * in ascending order (the cell pointer only moves forward).
 */
export class TableLookup {
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
