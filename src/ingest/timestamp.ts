/** 9999-12-31T23:59:59.999Z: the last instant ISO-8601 writes with four year digits. */
export const latestTimestamp = 253_402_300_799_999;

/**
 * Checks an epoch-millisecond timestamp: finite, from the Unix epoch to
 * {@link latestTimestamp}. Returns the value, or NaN when it is out of range.
 * Times before 1970 are refused because no request log is that old and such a
 * value is almost always a unit mix-up or a zero default.
 */
export function checkEpochMs(value: number): number {
  return value >= 0 && value <= latestTimestamp ? value : Number.NaN;
}

const isoPattern =
  /^(\d{4})-(\d{2})-(\d{2})[Tt ](\d{2}):(\d{2})(?::(\d{2})(?:[.,](\d+))?)?(?:([Zz])|([+-])(\d{2})(?::?(\d{2}))?)$/;

/**
 * Parses an ISO-8601 date-time that carries a zone (`Z`, `+02:00`, `-0500`,
 * `+05`) into epoch ms; NaN when the text is not one, or has no zone (a
 * zone-less time means a different instant on every machine, so it is never
 * guessed). Seconds and fractions are optional, a space may stand for `T`,
 * fractions beyond milliseconds are kept as fractional ms. O(length).
 *
 * @example parseIsoTimestamp('2025-12-01T10:00:00Z') // 1764583200000
 * @example parseIsoTimestamp('2025-12-01T10:00:00') // NaN (no zone)
 */
export function parseIsoTimestamp(text: string): number {
  const match = isoPattern.exec(text);
  if (match === null) return Number.NaN;
  const year = Number(match[1]);
  const month = Number(match[2]);
  const day = Number(match[3]);
  const hour = Number(match[4]);
  const minute = Number(match[5]);
  const second = match[6] === undefined ? 0 : Number(match[6]);
  if (month < 1 || month > 12 || day < 1 || day > daysInMonth(year, month)) return Number.NaN;
  // Second 60 is a leap second (RFC 3339 allows it); it lands on the next second.
  if (hour > 23 || minute > 59 || second > 60) return Number.NaN;
  let offsetMinutes = 0;
  if (match[8] === undefined) {
    const offsetHours = Number(match[10]);
    const offsetRest = match[11] === undefined ? 0 : Number(match[11]);
    if (offsetHours > 23 || offsetRest > 59) return Number.NaN;
    offsetMinutes = (match[9] === '-' ? -1 : 1) * (offsetHours * 60 + offsetRest);
  }
  const fraction = match[7] === undefined ? 0 : Number(`0.${match[7]}`) * 1000;
  const localMs =
    ((daysFromCivil(year, month, day) * 24 + hour) * 60 + minute) * 60_000 +
    second * 1000 +
    fraction;
  return checkEpochMs(localMs - offsetMinutes * 60_000);
}

function isLeapYear(year: number): boolean {
  return (year % 4 === 0 && year % 100 !== 0) || year % 400 === 0;
}

function daysInMonth(year: number, month: number): number {
  if (month === 2) return isLeapYear(year) ? 29 : 28;
  return month === 4 || month === 6 || month === 9 || month === 11 ? 30 : 31;
}

/**
 * Days since 1970-01-01 of a proleptic Gregorian date, by H. Hinnant's
 * days_from_civil ("chrono-Compatible Low-Level Date Algorithms", 2013).
 * Date.UTC would read years 0-99 as 1900-1999.
 */
function daysFromCivil(year: number, month: number, day: number): number {
  const shifted = month <= 2 ? year - 1 : year;
  const era = Math.floor(shifted / 400);
  const yearOfEra = shifted - era * 400;
  const dayOfYear = Math.floor((153 * (month + (month > 2 ? -3 : 9)) + 2) / 5) + day - 1;
  const dayOfEra =
    yearOfEra * 365 + Math.floor(yearOfEra / 4) - Math.floor(yearOfEra / 100) + dayOfYear;
  return era * 146_097 + dayOfEra - 719_468;
}
