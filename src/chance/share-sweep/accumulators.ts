import type { Coefficients } from './coefficient-table.js';

/** Running sums of a binomial walk; tails are kept as multiples of e^reference. */
export interface TailAccumulator {
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
export interface CutAccumulator {
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

export function addTail(acc: TailAccumulator, i: number, k: number, scaled: number): void {
  acc.sum += scaled;
  acc.squares += scaled * scaled;
  rankTail(acc, i, k, scaled);
}

/** Keep shard i among the two largest tails seen. */
export function rankTail(acc: TailAccumulator, i: number, k: number, scaled: number): void {
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
export function addCut(
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

export function storeTails(
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
export interface TailState {
  readonly co: Coefficients;
  count: number;
  readonly threshold: Float64Array;
  readonly tail: Float64Array;
  sum: number;
  squares: number;
}
