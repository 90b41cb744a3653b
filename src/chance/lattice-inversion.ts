/**
 * P(W = at) for W a sum of independent integer variables given by their mass functions
 * (`count` independent copies of each piece), read from W's characteristic function at the
 * one point asked for, without forming W's mass function.
 *
 * Method: for an integer variable, P(W = d) = (1 / L) sum_{k=0}^{L-1} phi_W(2 pi k / L)
 * e^{-2 pi i k d / L} + sum_{j != 0} P(W = d + j L) (the trapezoid rule on [0, 2 pi) is
 * exact up to this aliasing; the Poisson summation formula). phi_W is the product of the
 * pieces' characteristic functions raised to their counts, each evaluated by Horner's rule
 * on the unit circle. Two errors, both bounded and both kept below 1e-15 of the answer:
 * - aliasing: L is chosen so that Chernoff's bound on P(W >= d + L) + P(W <= d - L), from
 *   the pieces' exact cumulant generating functions, is negligible (about 14 standard
 *   deviations of W when W is near normal; the whole support when that is narrower);
 * - truncation: frequencies are summed from 0 upwards until the rest is negligible, by
 *   summation by parts: |sum_j q_j z^j| <= V / |1 - z| with V the total variation of the
 *   piece (Abel's inequality), so |phi_W| over the rest is bounded by a product that falls
 *   like k^(-number of pieces).
 * Rounding in Horner's rule on |z| = 1 is about (width) x 1e-16 of the piece's mass at
 * worst, about 1e-11 relative in the answer at the widths used here.
 *
 * Cost: (frequencies) x (sum of the distinct pieces' widths). With many pieces the
 * characteristic function falls fast and few frequencies are needed (tens at 64 shards),
 * where repeated squaring by FFT needs a dozen transforms of W's whole width; with two or
 * three pieces the convolution is cheaper, and {@link inversionWork} tells the caller which.
 */

/** A mass function on offset, offset + 1, ... and how many independent copies enter W. */
export interface LatticePiece {
  readonly offset: number;
  readonly values: Float64Array;
  readonly count: number;
}

/**
 * The piece without its end terms below 1e-25 of its peak: W's density moves by less than
 * 1e-22 of itself (the dropped mass), and every frequency costs less.
 */
function trimmed(piece: LatticePiece): LatticePiece {
  const v = piece.values;
  let peak = 0;
  for (let j = 0; j < v.length; j++) if (v[j] > peak) peak = v[j];
  const floor = peak * 1e-25;
  let start = 0;
  let end = v.length;
  while (start < end - 1 && v[start] < floor) start++;
  while (end > start + 1 && v[end - 1] < floor) end--;
  if (start === 0 && end === v.length) return piece;
  return { offset: piece.offset + start, values: v.subarray(start, end), count: piece.count };
}

/** What the inversion needs to know of a piece, computed once. O(width). */
interface PieceStats {
  readonly piece: LatticePiece;
  /** Total mass (1 up to the cut at `at` and the pruning). */
  readonly mass: number;
  /** Mean and variance relative to the offset. */
  readonly mean: number;
  readonly variance: number;
  /** Total variation of the sequence padded with zeros on both sides. */
  readonly variation: number;
  /** The two end values (the jumps to the zeros outside). */
  readonly ends: number;
  /** Total variation of the first differences inside, with their end values. */
  readonly curvature: number;
}

function statsOf(piece: LatticePiece): PieceStats {
  const v = piece.values;
  let mass = 0;
  let first = 0;
  for (let j = 0; j < v.length; j++) {
    mass += v[j];
    first += j * v[j];
  }
  const mean = mass > 0 ? first / mass : 0;
  let second = 0;
  let variation = 0;
  let previous = 0;
  for (let j = 0; j < v.length; j++) {
    const centred = j - mean;
    second += centred * centred * v[j];
    variation += Math.abs(v[j] - previous);
    previous = v[j];
  }
  variation += previous;
  const n = v.length;
  let curvature = 0;
  if (n >= 2) {
    let delta = v[1] - v[0];
    curvature = Math.abs(delta);
    for (let j = 2; j < n; j++) {
      const next = v[j] - v[j - 1];
      curvature += Math.abs(next - delta);
      delta = next;
    }
    curvature += Math.abs(delta);
  }
  const ends = n >= 2 ? v[0] + v[n - 1] : 2 * (v[0] ?? 0);
  return {
    piece,
    mass,
    mean,
    variance: mass > 0 ? second / mass : 0,
    variation,
    ends,
    curvature,
  };
}

/**
 * sum_j v_j z^j at two points of the unit circle by Horner's rule, in one pass:
 * out = [re1, im1, re2, im2].
 */
function hornerPair(
  v: Float64Array,
  zr1: number,
  zi1: number,
  zr2: number,
  zi2: number,
  out: Float64Array,
): void {
  let re1 = 0;
  let im1 = 0;
  let re2 = 0;
  let im2 = 0;
  for (let j = v.length - 1; j >= 0; j--) {
    const x = v[j];
    const r1 = re1 * zr1 - im1 * zi1 + x;
    im1 = re1 * zi1 + im1 * zr1;
    re1 = r1;
    const r2 = re2 * zr2 - im2 * zi2 + x;
    im2 = re2 * zi2 + im2 * zr2;
    re2 = r2;
  }
  out[0] = re1;
  out[1] = im1;
  out[2] = re2;
  out[3] = im2;
}

/**
 * A bound on |sum_j q_j z^j| over every z = e^{i omega} with |1 - z| >= chord: summation by
 * parts once gives V / |1 - z| (V the total variation), twice gives
 * (q_first + q_last) / |1 - z| + V' / |1 - z|^2 (V' that of the first differences), far the
 * tighter for a smooth piece cut sharply at one end. Non-increasing in chord.
 */
function pieceBound(s: PieceStats, chord: number): number {
  return Math.min(s.mass, s.variation / chord, s.ends / chord + s.curvature / (chord * chord));
}

/** log E[e^{theta Y}] for one piece (Y from 0), with the tilted mean and variance. O(width). */
function tilt(v: Float64Array, theta: number): { logMgf: number; mean: number; variance: number } {
  const n = v.length;
  // Weights e^{theta (j - ref)} <= 1 with ref the end towards which theta leans, by a
  // recurrence (one product a term) while nothing can underflow that matters, else by exp.
  const ref = theta > 0 ? n - 1 : 0;
  const stepDown = Math.exp(-Math.abs(theta));
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  if (Math.abs(theta) * n < 600) {
    let w = 1;
    for (let i = 0; i < n; i++) {
      const j = theta > 0 ? n - 1 - i : i;
      const x = v[j] * w;
      const c = j - ref;
      s0 += x;
      s1 += x * c;
      s2 += x * c * c;
      w *= stepDown;
    }
  } else {
    for (let j = 0; j < n; j++) {
      const x = v[j] * Math.exp(theta * (j - ref));
      const c = j - ref;
      s0 += x;
      s1 += x * c;
      s2 += x * c * c;
    }
  }
  const mean = s1 / s0;
  return {
    logMgf: Math.log(s0) + theta * ref,
    mean: mean + ref,
    variance: Math.max(s2 / s0 - mean * mean, 0),
  };
}

/**
 * log of Chernoff's bound inf_theta exp(K_W(theta) - theta x) on P(W >= x) (x above the
 * mean) or P(W <= x) (below), x relative to the sum of the offsets, from the pieces' exact
 * cumulant generating functions. Newton's method on K_W'(theta) = x from the normal
 * optimum; any theta gives a valid bound, so the steps stop once it is below `enough`
 * (usually the first). O(steps x widths).
 */
function logTailBound(
  stats: readonly PieceStats[],
  mean: number,
  variance: number,
  x: number,
  enough: number,
): number {
  const gap = x - mean;
  if (gap === 0 || variance === 0) return 0;
  let theta = gap / variance;
  let best = 0;
  for (let step = 0; step < 6; step++) {
    let logMgf = 0;
    let tiltedMean = 0;
    let tiltedVariance = 0;
    for (const s of stats) {
      const t = tilt(s.piece.values, theta);
      logMgf += s.piece.count * t.logMgf;
      tiltedMean += s.piece.count * t.mean;
      tiltedVariance += s.piece.count * t.variance;
    }
    const bound = logMgf - theta * x;
    if (bound < best) best = bound;
    if (best <= enough || !(tiltedVariance > 0)) break;
    const next = theta + (x - tiltedMean) / tiltedVariance;
    // Stay on the side of the gap; halve towards 0 rather than cross it.
    const kept = next * gap > 0 ? next : theta / 2;
    if (Math.abs(kept - theta) <= 1e-3 * Math.abs(theta)) break;
    theta = kept;
  }
  return best;
}

/** Frequencies needed, estimated from the spreads alone (for choosing a method). O(pieces). */
export function inversionWork(
  pieces: readonly { count: number; sd: number; width: number }[],
): number {
  let variance = 0;
  let widths = 0;
  let copies = 0;
  for (const p of pieces) {
    variance += p.count * p.sd * p.sd;
    widths += p.width;
    copies += p.count;
  }
  const period = 2 * (14 * Math.sqrt(variance) + 16);
  // The bound (V / |1 - z|)^copies with V about 2 x peak = 0.8 / sd falls below 1e-17 at
  // about 0.25 L / sd x 10^(17 / copies) frequencies (one shared sd: the typical one).
  const sd = Math.sqrt(variance / Math.max(copies, 1));
  const frequencies = Math.min(period / 2, (0.25 * period * 10 ** (17 / copies)) / sd + 1);
  return 8 * frequencies * widths;
}

/**
 * log P(W = at), W the sum of `count` independent copies of each piece, by inversion of
 * the characteristic function; null when the inversion would cost more than `maxWork`
 * operations (the caller then convolves). Relative error about 1e-11.
 * Example: pieces [{offset: 0, values: [0.5, 0.5], count: 2}] at 1 give log(0.5).
 */
export function sumLogDensityAt(
  pieces: readonly LatticePiece[],
  at: number,
  maxWork = Infinity,
): number | null {
  const stats: PieceStats[] = [];
  let base = 0;
  let top = 0;
  let mean = 0;
  let variance = 0;
  let widths = 0;
  for (const whole of pieces) {
    if (whole.count === 0) continue;
    if (whole.values.length === 0) return -Infinity;
    const piece = trimmed(whole);
    const s = statsOf(piece);
    stats.push(s);
    base += piece.count * piece.offset;
    top += piece.count * (piece.values.length - 1);
    mean += piece.count * s.mean;
    variance += piece.count * s.variance;
    widths += piece.values.length;
  }
  const d = at - base;
  if (d < 0 || d > top) return -Infinity;
  if (stats.length === 0) return d === 0 ? 0 : -Infinity;
  const support = top + 1;
  // The period: the whole support when that is short, else wide enough that Chernoff's
  // bound on the aliased mass is negligible (checked, and widened while it is not).
  const sd = Math.sqrt(variance);
  let period = Math.min(support, Math.ceil(2 * (Math.abs(d - mean) + 14 * sd + 16)));
  // Aliased mass below 1e-20 of the density's own scale (about 1 / (2.5 sd) at the centre).
  const logFloor = -Math.log(Math.max(2.5 * sd, 1)) - 20 * Math.LN10;
  while (period < support) {
    const above =
      d + period <= top ? logTailBound(stats, mean, variance, d + period, logFloor) : -Infinity;
    const below =
      d - period >= 0 ? logTailBound(stats, mean, variance, d - period, logFloor) : -Infinity;
    if (Math.max(above, below) <= logFloor) break;
    period = Math.min(support, Math.ceil(period * 1.5));
  }
  const L = period;
  // k d is reduced modulo L exactly only while both stay below 2^26.
  if (L > 2 ** 26) return null;
  const step = (2 * Math.PI) / L;
  const dModL = d % L;
  const half = Math.floor((L - 1) / 2);

  let logMass0 = 0;
  for (const s of stats) logMass0 += s.piece.count * Math.log(s.mass);
  let sum = Math.exp(logMass0);
  let work = 0;
  let stoppedEarly = false;
  const pair = new Float64Array(4);
  for (let k = 1; k <= half; k += 2) {
    // Abel's bound on everything from k on (the bound falls with k up to L / 2).
    const chord = 2 * Math.sin((Math.PI * k) / L);
    let logEnvelope = 0;
    for (const s of stats) logEnvelope += s.piece.count * Math.log(pieceBound(s, chord));
    if (Math.exp(logEnvelope) * 2 * (half - k + 1) <= 1e-16 * Math.abs(sum)) {
      stoppedEarly = true;
      break;
    }
    // Frequencies k and k + 1 in one pass over each piece (the second dropped past half).
    const both = k + 1 <= half;
    work += widths * (both ? 16 : 8);
    if (work > maxWork) return null;
    const zr1 = Math.cos(step * k);
    const zi1 = Math.sin(step * k);
    const zr2 = Math.cos(step * (k + 1));
    const zi2 = Math.sin(step * (k + 1));
    let logAbs1 = 0;
    let phase1 = 0;
    let logAbs2 = 0;
    let phase2 = 0;
    for (const s of stats) {
      hornerPair(s.piece.values, zr1, zi1, zr2, zi2, pair);
      logAbs1 += s.piece.count * Math.log(Math.hypot(pair[0], pair[1]));
      phase1 += s.piece.count * Math.atan2(pair[1], pair[0]);
      logAbs2 += s.piece.count * Math.log(Math.hypot(pair[2], pair[3]));
      phase2 += s.piece.count * Math.atan2(pair[3], pair[2]);
    }
    // e^{-i omega d}, with k d reduced modulo L exactly (both below 2^26 here).
    phase1 -= step * ((dModL * k) % L);
    sum += 2 * Math.exp(logAbs1) * Math.cos(phase1);
    if (both) {
      phase2 -= step * ((dModL * (k + 1)) % L);
      sum += 2 * Math.exp(logAbs2) * Math.cos(phase2);
    }
  }
  if (L % 2 === 0 && !stoppedEarly) {
    // The last frequency (z = -1) pairs with itself; reached only when nothing stopped early.
    let logAbs = 0;
    let phase = 0;
    for (const s of stats) {
      const v = s.piece.values;
      let re = 0;
      for (let j = v.length - 1; j >= 0; j--) re = -re + v[j];
      logAbs += s.piece.count * Math.log(Math.abs(re));
      if (re < 0) phase += s.piece.count * Math.PI;
    }
    phase -= Math.PI * (dModL % 2);
    sum += Math.exp(logAbs) * Math.cos(phase);
  }
  const density = sum / L;
  return density > 0 ? Math.log(density) : -Infinity;
}
