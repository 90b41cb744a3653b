/**
 * How numbers read on the screen: short, with their unit, and never a bare 0 for a
 * probability that is merely tiny. Formatting only; every value comes from a verdict.
 */

/** The engine's reporting floor (chance/log-space.ts): a p-value at it means "this or less". */
const probabilityFloor = 1e-300;

/**
 * A p-value in at most 8 characters: three significant digits from 0.001 up, two in
 * exponent form below, `<1e-300` at the engine's floor. Example: formatP(2.2e-122) is '2.2e-122'.
 */
export function formatP(p: number): string {
  if (p <= probabilityFloor) return '<1e-300';
  if (p >= 0.001) return p >= 0.9995 ? '1' : p.toPrecision(3).replace(/0+$/, '');
  const [mantissa, exponent] = p.toExponential(1).split('e');
  return `${mantissa.replace(/\.0$/, '')}e${exponent}`;
}

/**
 * "p = 0.021" in a sentence, or "p < 1e-300" at the engine's floor (never "p = <1e-300").
 * Example: pStatement(1e-320) is 'p < 1e-300'.
 */
export function pStatement(p: number): string {
  return p <= probabilityFloor ? 'p < 1e-300' : `p = ${formatP(p)}`;
}

/** A relative load as a multiple of the fair share. Example: formatRelative(1.7781) is '1.78x'. */
export function formatRelative(relative: number): string {
  if (!Number.isFinite(relative)) return '-';
  return relative >= 100 ? `${Math.round(relative)}x` : `${relative.toFixed(2)}x`;
}

/**
 * A count of requests: whole numbers up to a million, then k/M/G with three digits.
 * Fractions (robust mode's scaled levels) keep one decimal below 100.
 * Example: formatCount(1778) is '1778'; formatCount(2.5e9) is '2.50G'.
 */
export function formatCount(count: number): string {
  if (!Number.isFinite(count)) return '-';
  const size = Math.abs(count);
  if (size >= 1e9) return `${(count / 1e9).toPrecision(3)}G`;
  if (size >= 1e6) return `${(count / 1e6).toPrecision(3)}M`;
  if (Number.isInteger(count) || size >= 100) return String(Math.round(count));
  return count.toFixed(1);
}

/** A rate per second. Example: formatRate(6400) is '6400/s'; formatRate(12.34) is '12.3/s'. */
export function formatRate(perSecond: number): string {
  if (perSecond >= 1e6) return `${(perSecond / 1e6).toPrecision(3)}M/s`;
  if (perSecond >= 100) return `${Math.round(perSecond)}/s`;
  return `${perSecond.toFixed(1)}/s`;
}

/**
 * A span of time in the largest sensible unit. Example: formatDuration(1500) is '1.5 s';
 * formatDuration(600_000) is '10 min'.
 */
export function formatDuration(ms: number): string {
  const seconds = ms / 1000;
  if (seconds < 10) return `${seconds.toFixed(1)} s`;
  if (seconds < 120) return `${Math.round(seconds)} s`;
  if (seconds < 7200) return `${Math.round(seconds / 60)} min`;
  if (seconds < 172_800) return `${Math.round(seconds / 3600)} h`;
  return `${Math.round(seconds / 86_400)} d`;
}

/** A window length as the options write it. Example: formatWindowLength(10_000) is '10 s'. */
export function formatWindowLength(ms: number): string {
  if (ms % 3_600_000 === 0) return `${ms / 3_600_000} h`;
  if (ms % 60_000 === 0) return `${ms / 60_000} min`;
  if (ms % 1000 === 0) return `${ms / 1000} s`;
  return `${ms} ms`;
}

/**
 * Wall-clock time of day in UTC, as the verdict stream's ISO times are UTC.
 * Example: formatClock(Date.UTC(2025, 11, 1, 0, 0, 20)) is '00:00:20'.
 */
export function formatClock(ms: number): string {
  return new Date(ms).toISOString().slice(11, 19);
}

/** A plain decimal with three significant digits. Example: formatPlain(11.813) is '11.8'. */
export function formatPlain(value: number): string {
  if (!Number.isFinite(value)) return '-';
  return Math.abs(value) >= 1000 ? String(Math.round(value)) : String(Number(value.toPrecision(3)));
}
