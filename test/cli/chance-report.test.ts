import { describe, expect, it } from 'vitest';
import { formatNumber, reportedProbability } from '../../src/cli/chance-report.js';

describe('reportedProbability', () => {
  it('exactly 0 only for an impossible event; a possible one never below 1e-300', () => {
    expect(reportedProbability({ logProbability: -Infinity, method: 'impossible' })).toBe(0);
    expect(reportedProbability({ logProbability: -Infinity, method: 'exact' })).toBe(0);
    // A log that underflowed in another method is still possible: the reporting floor.
    expect(
      reportedProbability({ logProbability: -Infinity, method: 'saddle point' } as never),
    ).toBe(1e-300);
    expect(reportedProbability({ logProbability: -800, method: 'exact' })).toBe(1e-300);
    expect(reportedProbability({ logProbability: Math.log(0.25), method: 'exact' })).toBeCloseTo(
      0.25,
      15,
    );
  });
});

describe('formatNumber', () => {
  it('six significant digits, exponent form below 1e-4 and from 1e12', () => {
    expect(formatNumber(0)).toBe('0');
    expect(formatNumber(123.456789)).toBe('123.457');
    expect(formatNumber(0.0001)).toBe('0.0001');
    expect(formatNumber(0.0000123456789)).toBe('1.23457e-5');
    expect(formatNumber(1e12)).toBe('1.00000e+12');
    expect(formatNumber(2.5, 2)).toBe('2.5');
    expect(formatNumber(Number.POSITIVE_INFINITY)).toBe('Infinity');
  });
});
