import jStat from 'jstat';
import { describe, expect, it } from 'vitest';
import {
  logBinomialAtLeast,
  logBinomialAtMost,
  logPoissonAtLeast,
  logPoissonAtMost,
} from '../../src/chance/tails.js';
import {
  logBinomialDensity,
  logPoissonDensity,
  stirlingError,
} from '../../src/chance/discrete-densities.js';
import { huge, reference, relativeError } from './reference-data.js';

// Reference library: jstat 1.9.6 from the npm registry (jStat.poisson.cdf/pdf, jStat.binomial.cdf/pdf).
describe('tails at large and extreme arguments against scipy.stats (reference/exact.json)', () => {
  it('binomial up to N = 1e9 and Poisson up to mean 1e8, both tails, within 1e-9 relative', () => {
    const failures: string[] = [];
    for (const t of reference.tails) {
      const [atMost, atLeast] =
        t.law === 'binomial'
          ? [logBinomialAtMost(t.k, t.n!, t.share!), logBinomialAtLeast(t.k, t.n!, t.share!)]
          : [logPoissonAtMost(t.k, t.mean!), logPoissonAtLeast(t.k, t.mean!)];
      for (const [mine, theirs, name] of [
        [atMost, t.atMost, 'atMost'],
        [atLeast, t.atLeast, 'atLeast'],
      ] as const) {
        if (theirs < 1e-300) continue;
        if (!(relativeError(Math.exp(mine), theirs) <= 1e-9))
          failures.push(`${JSON.stringify(t)} ${name}: ${Math.exp(mine)}`);
      }
    }
    expect(failures).toEqual([]);
  });
});

describe('Poisson and binomial densities and tails against jStat', () => {
  it('Poisson density and tails (jStat.poisson.pdf / .cdf) within 1e-9 relative', () => {
    // jStat's own sums overflow past about mean 100 and underflow below 1e-100; compared where it holds.
    for (const mean of [0.3, 2, 17.5, 60]) {
      for (let k = 0; k <= Math.ceil(mean * 2 + 10); k++) {
        expect(
          relativeError(Math.exp(logPoissonDensity(k, mean)), jStat.poisson.pdf(k, mean)),
        ).toBeLessThan(1e-9);
        const cdf = jStat.poisson.cdf(k, mean);
        expect(relativeError(Math.exp(logPoissonAtMost(k, mean)), cdf)).toBeLessThan(1e-9);
        if (1 - cdf > 1e-6)
          expect(relativeError(Math.exp(logPoissonAtLeast(k + 1, mean)), 1 - cdf)).toBeLessThan(
            1e-6,
          );
      }
    }
  });

  it('binomial density and tails (jStat.binomial.pdf / .cdf) within 1e-8 relative', () => {
    for (const [n, p] of [
      [10, 0.3],
      [200, 0.01],
      [1000, 0.5],
    ] as const) {
      for (let k = 0; k <= n; k += Math.max(1, Math.floor(n / 50))) {
        const pdf = jStat.binomial.pdf(k, n, p);
        if (pdf < 1e-100) continue;
        expect(relativeError(Math.exp(logBinomialDensity(k, n, p)), pdf)).toBeLessThan(1e-8);
        const cdf = jStat.binomial.cdf(k, n, p);
        // jStat 1.9.6 rounds binomial.cdf to 10 decimal places, hence the absolute 1e-10.
        expect(Math.abs(Math.exp(logBinomialAtMost(k, n, p)) - cdf)).toBeLessThan(
          1e-10 + 1e-8 * cdf,
        );
        expect(Math.abs(Math.exp(logBinomialAtLeast(k + 1, n, p)) - (1 - cdf))).toBeLessThan(
          1e-10 + 1e-8 * (1 - cdf),
        );
      }
    }
  });

  it("Stirling's error term at 1 is log(e / sqrt(2 pi)) (definition, worked by hand)", () => {
    expect(stirlingError(1)).toBeCloseTo(1 - 0.5 * Math.log(2 * Math.PI), 14);
    // n = 100: log(100!) = 363.73937555556347 (published value of log 100!, e.g. any table of log-factorials)
    expect(
      stirlingError(100) + 100.5 * Math.log(100) - 100 + 0.5 * Math.log(2 * Math.PI),
    ).toBeCloseTo(363.73937555556347, 9);
  });

  it('far tails stay finite in log space instead of underflowing to 0', () => {
    // P(Poisson(1) >= 200) = e^-1 / 200! * (1 + 1/201 + 1/(201*202) + ...): log 200! = 863.2319871924054
    // (Python 3.11 math.lgamma(201)) and the series factor log(1.00499987...) = 0.0049874177608924
    // (summed in Python 3.11 floats).
    expect(logPoissonAtLeast(200, 1)).toBeCloseTo(-1 - 863.2319871924054 + 0.0049874177608924, 9);
    expect(Number.isFinite(logBinomialAtLeast(900, 1000, 0.1))).toBe(true);
    expect(logBinomialAtLeast(900, 1000, 0.1)).toBeLessThan(-700);
  });
});

describe('binomial tails from N = 1e12 to 2^53 - 1 (the O(1) saddle-point path)', () => {
  // Reference: mpmath 1.3.0, the incomplete beta integral at 30 digits
  // (reference/make-huge-reference.py, log_upper / log_lower), in reference/huge.json.
  it('both tails within 1e-8 relative of mpmath at N p q from 1e7 to 2.3e15, -30 to 30 sd', () => {
    const failures: string[] = [];
    for (const t of huge.binomial) {
      const atLeast = logBinomialAtLeast(t.k, t.n, t.share);
      const atMost = logBinomialAtMost(t.k, t.n, t.share);
      if (!(Math.abs(atLeast - t.logAtLeast) <= 1e-8))
        failures.push(`${JSON.stringify(t)} atLeast ${atLeast}`);
      if (!(Math.abs(atMost - t.logAtMost) <= 1e-8))
        failures.push(`${JSON.stringify(t)} atMost ${atMost}`);
    }
    expect(failures).toEqual([]);
  });
});
