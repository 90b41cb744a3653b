import type { TailProbability } from '../chance/extreme-load.js';
import { probabilityFromLog } from '../chance/log-space.js';

/** A probability for output: exactly 0 for an impossible event, never below 1e-300 otherwise. */
export function reportedProbability(
  tail: Pick<TailProbability, 'logProbability' | 'method'>,
): number {
  if (
    tail.logProbability === -Infinity &&
    (tail.method === 'impossible' || tail.method === 'exact')
  )
    return 0;
  return probabilityFromLog(tail.logProbability);
}

/** A number for a readable table: up to `digits` significant digits, exponent form for tiny values. */
export function formatNumber(value: number, digits = 6): string {
  if (value === 0) return '0';
  if (!Number.isFinite(value)) return String(value);
  const magnitude = Math.abs(value);
  if (magnitude < 1e-4 || magnitude >= 1e12) return value.toExponential(digits - 1);
  return Number(value.toPrecision(digits)).toString();
}
