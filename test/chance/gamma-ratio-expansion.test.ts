import { describe, expect, it } from 'vitest';
import { logGammaRatio } from '../../src/chance/gamma-ratio-expansion.js';
import { TEMME_COEFFICIENTS } from '../../src/chance/temme-coefficients.js';
import { binomialRunMethods, logPoissonAtLeast } from '../../src/chance/tails.js';
import { reference, relativeError } from './reference-data.js';

describe("Temme's expansion of the incomplete gamma ratio", () => {
  it('has the published leading coefficients (DLMF 8.12.12; from memory: -1/3, 1/12, -2/135; -1/540)', () => {
    expect(TEMME_COEFFICIENTS[0][0]).toBeCloseTo(-1 / 3, 15);
    expect(TEMME_COEFFICIENTS[0][1]).toBeCloseTo(1 / 12, 15);
    expect(TEMME_COEFFICIENTS[0][2]).toBeCloseTo(-2 / 135, 15);
    expect(TEMME_COEFFICIENTS[1][0]).toBeCloseTo(-1 / 540, 15);
  });

  it('matches mpmath.gammainc (40 digits, reference/exact.json) within 1e-15 (30 + |log value|) relative', () => {
    const failures: string[] = [];
    let covered = 0;
    for (const g of reference.gammaRatios) {
      for (const [which, theirs] of [
        ['lower', g.lower],
        ['upper', g.upper],
      ] as const) {
        const mine = logGammaRatio(g.a, g.x, which);
        if (mine === null) continue;
        covered++;
        // Rounding of the exponent a (lambda - 1 - ln lambda) grows with the log of the value.
        const tolerance = 1e-15 * (30 + Math.abs(Math.log(theirs)));
        if (!(relativeError(Math.exp(mine), theirs) <= tolerance))
          failures.push(`${JSON.stringify(g)} ${which}: ${Math.exp(mine)}`);
      }
    }
    expect(failures).toEqual([]);
    // The domain is a >= 25 and x within about [0.32 a, 2.16 a]: most of the grid.
    expect(covered).toBeGreaterThan(100);
  });

  it('declines outside its domain (small shapes, x far from a)', () => {
    expect(logGammaRatio(10, 10, 'lower')).toBeNull();
    expect(logGammaRatio(100, 20, 'lower')).toBeNull();
    expect(logGammaRatio(100, 300, 'upper')).toBeNull();
  });

  it('keeps the log of tails far below 1e-300 (Poisson(1e9) at 40 sd; asymptotic, common practice)', () => {
    // log P(Y >= mean + z sd) -> -z^2/2 - log(z sqrt(2 pi)) for a large mean (normal limit).
    const mean = 1e9;
    const z = 40;
    const logTail = logPoissonAtLeast(Math.round(mean + z * Math.sqrt(mean)), mean);
    expect(Number.isFinite(logTail)).toBe(true);
    expect(Math.abs(logTail - (-(z * z) / 2 - Math.log(z * Math.sqrt(2 * Math.PI))))).toBeLessThan(
      0.5,
    );
  });
});

describe('binomial runs from a corrected Poisson run', () => {
  it('agree with the term-by-term binomial sum within 1e-9 relative wherever they are used', () => {
    // The sum itself is checked against scipy.stats.binom in tails.test.ts.
    const failures: string[] = [];
    let used = 0;
    for (const n of [1e5, 1e7, 1e9, 5e12])
      for (const p of [1e-3, 1e-4, 2.5e-5, 1e-6, 1e-8]) {
        const mean = n * p;
        if (mean < 30) continue;
        const sd = Math.sqrt(mean * (1 - p));
        for (const z of [-20, -8, -3, -1, -0.2, 0.2, 1, 3, 8, 20]) {
          const k = Math.floor(mean + z * sd);
          if (k < 0) continue;
          const { summed, fromPoisson } = binomialRunMethods(k, n, p, k > mean);
          if (fromPoisson === null) continue;
          used++;
          if (!(Math.abs(Math.expm1(fromPoisson - summed)) <= 1e-9))
            failures.push(`n ${n} p ${p} k ${k}: ${fromPoisson} vs ${summed}`);
        }
      }
    expect(failures).toEqual([]);
    expect(used).toBeGreaterThan(50);
  });
});
