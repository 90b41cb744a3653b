import { describe, expect, it } from 'vitest';
import { checkEpochMs, latestTimestamp, parseIsoTimestamp } from '../../src/ingest/timestamp.js';

// Reference values: Date.UTC(...) of the same instant, worked by hand from the offset.
describe('parseIsoTimestamp', () => {
  it('reads UTC and offsets in all three spellings', () => {
    const tenUtc = Date.UTC(2025, 11, 1, 10, 0, 0);
    expect(parseIsoTimestamp('2025-12-01T10:00:00Z')).toBe(tenUtc);
    expect(parseIsoTimestamp('2025-12-01T10:00:00z')).toBe(tenUtc);
    expect(parseIsoTimestamp('2025-12-01T12:00:00+02:00')).toBe(tenUtc);
    expect(parseIsoTimestamp('2025-12-01T05:00:00-0500')).toBe(tenUtc);
    expect(parseIsoTimestamp('2025-12-01T15:00+05')).toBe(tenUtc);
    expect(parseIsoTimestamp('2025-12-01 10:00:00Z')).toBe(tenUtc);
    expect(parseIsoTimestamp('2025-12-01T10:30:00+00:30')).toBe(tenUtc);
  });

  it('keeps fractions of a second', () => {
    expect(parseIsoTimestamp('2025-12-01T10:00:00.250Z')).toBe(
      Date.UTC(2025, 11, 1, 10, 0, 0, 250),
    );
    expect(parseIsoTimestamp('2025-12-01T10:00:00,5Z')).toBe(Date.UTC(2025, 11, 1, 10, 0, 0, 500));
    // 0.1234567 s is 123.4567 ms. A double near 1.7e12 ms is spaced 2^-12 ms (about 0.00024 ms)
    // apart, so the tolerance is 5e-4 ms.
    expect(
      parseIsoTimestamp('2025-12-01T10:00:00.1234567Z') - Date.UTC(2025, 11, 1, 10),
    ).toBeCloseTo(123.4567, 3);
  });

  it('rejects a time without a zone', () => {
    expect(parseIsoTimestamp('2025-12-01T10:00:00')).toBeNaN();
    expect(parseIsoTimestamp('2025-12-01T10:00:00.000')).toBeNaN();
    expect(parseIsoTimestamp('2025-12-01')).toBeNaN();
  });

  it('rejects impossible dates and times', () => {
    expect(parseIsoTimestamp('2025-02-29T00:00:00Z')).toBeNaN();
    expect(parseIsoTimestamp('2025-13-01T00:00:00Z')).toBeNaN();
    expect(parseIsoTimestamp('2025-04-31T00:00:00Z')).toBeNaN();
    expect(parseIsoTimestamp('2025-12-01T24:00:00Z')).toBeNaN();
    expect(parseIsoTimestamp('2025-12-01T10:60:00Z')).toBeNaN();
    expect(parseIsoTimestamp('2025-12-01T10:00:00+24:00')).toBeNaN();
    expect(parseIsoTimestamp('yesterday')).toBeNaN();
    expect(parseIsoTimestamp('')).toBeNaN();
  });

  it('knows leap years and leap seconds', () => {
    // Gregorian rule: 2024 and 2000 are leap years, 1900 is not (and is before 1970 anyway).
    expect(parseIsoTimestamp('2024-02-29T00:00:00Z')).toBe(Date.UTC(2024, 1, 29));
    expect(parseIsoTimestamp('2000-02-29T00:00:00Z')).toBe(Date.UTC(2000, 1, 29));
    // RFC 3339 allows second 60; it lands on the next second.
    expect(parseIsoTimestamp('2016-12-31T23:59:60Z')).toBe(Date.UTC(2017, 0, 1));
  });

  it('refuses times before 1970, including two-digit years that Date.UTC would move to the 1900s', () => {
    expect(parseIsoTimestamp('1969-12-31T23:59:59Z')).toBeNaN();
    expect(parseIsoTimestamp('0075-06-01T00:00:00Z')).toBeNaN();
    expect(parseIsoTimestamp('1970-01-01T00:00:00Z')).toBe(0);
    // An offset can bring a 1969 local time into 1970: 23:30-01:00 is 00:30Z.
    expect(parseIsoTimestamp('1969-12-31T23:30:00-01:00')).toBe(30 * 60_000);
  });

  it('reads the last four-digit-year instant and nothing after it', () => {
    expect(parseIsoTimestamp('9999-12-31T23:59:59.999Z')).toBe(latestTimestamp);
    expect(latestTimestamp).toBe(Date.UTC(9999, 11, 31, 23, 59, 59, 999));
    expect(parseIsoTimestamp('9999-12-31T23:59:59.999-01:00')).toBeNaN();
  });
});

describe('checkEpochMs', () => {
  it('accepts the epoch through year 9999', () => {
    expect(checkEpochMs(0)).toBe(0);
    expect(checkEpochMs(1_764_583_200_000)).toBe(1_764_583_200_000);
    expect(checkEpochMs(-1)).toBeNaN();
    expect(checkEpochMs(latestTimestamp + 1)).toBeNaN();
    expect(checkEpochMs(Number.POSITIVE_INFINITY)).toBeNaN();
  });
});
