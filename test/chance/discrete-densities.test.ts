import { describe, expect, it } from 'vitest';
import {
  deviance,
  logBinomialDensity,
  logChoose,
  logFactorial,
  logPoissonDensity,
  stirlingError,
} from '../../src/chance/discrete-densities.js';

describe('discrete densities: the documented examples', () => {
  it('stirlingError(1) = 1 - log(sqrt(2 pi)) (worked by hand from log 1! and Stirling)', () => {
    expect(stirlingError(1)).toBeCloseTo(1 - 0.5 * Math.log(2 * Math.PI), 15);
  });

  it('deviance(10, 10) = 0', () => {
    expect(deviance(10, 10)).toBe(0);
  });

  it('logPoissonDensity(23, 23): mpmath 1.3.0 at 30 digits, log(e^-23 23^23 / 23!) = -2.4903086013939306819', () => {
    expect(logPoissonDensity(23, 23)).toBeCloseTo(-2.4903086013939306819, 13);
  });

  it('logBinomialDensity(1, 2, 0.5) = log 0.5, logFactorial(5) = log 120, logChoose(5, 2) = log 10 (by hand)', () => {
    expect(logBinomialDensity(1, 2, 0.5)).toBeCloseTo(Math.log(0.5), 14);
    expect(logFactorial(5)).toBeCloseTo(Math.log(120), 13);
    expect(logChoose(5, 2)).toBeCloseTo(Math.log(10), 13);
  });
});
