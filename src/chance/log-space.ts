/**
 * Log-space arithmetic shared by the chance engine. Probabilities travel as natural
 * logarithms so that tails far below the smallest double stay representable and
 * both tails (near 0 and near 1) keep their relative precision.
 */

/** The smallest probability reported as a number; anything below is reported as this bound. */
export const PROBABILITY_FLOOR = 1e-300;
/** Natural log of {@link PROBABILITY_FLOOR}. */
export const LOG_PROBABILITY_FLOOR = Math.log(PROBABILITY_FLOOR);

/**
 * log(exp(a) + exp(b)) without overflow or underflow.
 * O(1). Example: logAddExp(Math.log(0.25), Math.log(0.5)) === Math.log(0.75) (to rounding).
 */
export function logAddExp(a: number, b: number): number {
  if (a === -Infinity) return b;
  if (b === -Infinity) return a;
  const high = a > b ? a : b;
  const low = a > b ? b : a;
  return high + Math.log1p(Math.exp(low - high));
}

/**
 * log(1 - exp(x)) for x <= 0, the complement of a probability given by its log.
 * Uses the two-branch rule of Maechler (2012), "Accurately computing log(1 - exp(-|a|))",
 * which keeps full relative precision for x near 0 and for x very negative.
 * O(1). Example: log1mExp(Math.log(0.25)) === Math.log(0.75) (to rounding).
 */
export function log1mExp(x: number): number {
  if (x > 0) return NaN;
  if (x === 0) return -Infinity;
  return x > -Math.LN2 ? Math.log(-Math.expm1(x)) : Math.log1p(-Math.exp(x));
}

/**
 * A probability from its log, clamped to the reporting floor so that a possible event is
 * never reported as 0 and an impossible one is exactly 0.
 * O(1). Example: probabilityFromLog(-800) === 1e-300; probabilityFromLog(-Infinity, false) === 0
 * (impossible), while a possible event whose log underflowed to -Infinity still reads 1e-300.
 */
export function probabilityFromLog(logP: number, possible = true): number {
  if (logP === -Infinity && !possible) return 0;
  if (!(logP > LOG_PROBABILITY_FLOOR)) return PROBABILITY_FLOOR;
  const p = Math.exp(logP);
  return p > 1 ? 1 : p;
}

/**
 * log(exp(a) - exp(b)) for a >= b, without leaving log space.
 * O(1). Example: logDifference(Math.log(0.75), Math.log(0.25)) === Math.log(0.5) (to rounding).
 */
export function logDifference(a: number, b: number): number {
  if (b === -Infinity) return a;
  return a + log1mExp(Math.min(0, b - a));
}
