import { describe, expect, it } from 'vitest';
import { sumLogDensityAt } from '../../src/chance/lattice-inversion.js';
import { cutMassFunction } from '../../src/chance/truncated-poisson.js';

/** A whole Poisson(mean) mass function (terms below 1e-40 of the peak dropped). */
function poisson(mean: number) {
  return cutMassFunction({ mean, lower: 0, upper: Infinity }, 0, Number.MAX_SAFE_INTEGER);
}

function bernoulli(p: number) {
  return { offset: 0, values: Float64Array.of(1 - p, p) };
}

function relative(logValue: number | null, expected: number): number {
  if (logValue === null) throw new Error('the inversion declined');
  return Math.abs(Math.exp(logValue) / expected - 1);
}

describe('sumLogDensityAt: P(W = at) by inverting the characteristic function', () => {
  it('40 Bernoulli(0.3) pieces are Binomial(40, 0.3)', () => {
    // scipy 1.17.1: scipy.stats.binom.pmf(12, 40, 0.3)
    const value = sumLogDensityAt([{ ...bernoulli(0.3), count: 40 }], 12);
    expect(relative(value, 0.13657382060056153)).toBeLessThan(1e-12);
  });

  it('10 000 fair coins: the whole support is far wider than the period it uses', () => {
    // scipy 1.17.1: scipy.stats.binom.pmf(5000, 10000, 0.5)
    const value = sumLogDensityAt([{ ...bernoulli(0.5), count: 10_000 }], 5000);
    expect(relative(value, 0.007978646139382158)).toBeLessThan(1e-11);
  });

  it('64 Poisson(100) pieces are Poisson(6400), at the centre and 1.2 sd below', () => {
    // Sums of independent Poisson variables are Poisson (common practice); mpmath 1.3.0 at
    // 40 digits: exp(-mu + k log(mu) - loggamma(k + 1)) for k = 6400 and 6300, mu = 6400.
    // (scipy.stats.poisson.pmf(6400, 6400) is itself 1.1e-11 off: its logs cancel.)
    const pieces = [{ ...poisson(100), count: 64 }];
    expect(relative(sumLogDensityAt(pieces, 6400), 0.004986713573428909845)).toBeLessThan(1e-12);
    expect(relative(sumLogDensityAt(pieces, 6300), 0.0022917138903060130194)).toBeLessThan(1e-11);
  });

  it('unequal pieces: 5 x Poisson(3) + 2 x Poisson(7) is Poisson(29)', () => {
    // mpmath 1.3.0 at 40 digits: exp(-29 + 30 log(29) - loggamma(31))
    const pieces = [
      { ...poisson(3), count: 5 },
      { ...poisson(7), count: 2 },
    ];
    expect(relative(sumLogDensityAt(pieces, 30), 0.071406851901357093103)).toBeLessThan(1e-12);
  });

  it('outside the support is impossible, and a work limit declines instead of guessing', () => {
    const pieces = [{ ...bernoulli(0.3), count: 40 }];
    expect(sumLogDensityAt(pieces, 41)).toBe(-Infinity);
    expect(sumLogDensityAt([{ offset: 5, values: Float64Array.of(1), count: 3 }], 14)).toBe(
      -Infinity,
    );
    expect(sumLogDensityAt([{ ...poisson(100), count: 64 }], 6400, 1000)).toBeNull();
  });
});
