import { describe, expect, it } from 'vitest';
import { PooledSpread, tailDispersion } from '../../src/judge/pooled-spread.js';

// Worked by hand from the formulae of pooled-spread.ts's doc comment; the Student t
// quantiles and the negative binomial root come from scipy 1.17.1:
//   stats.t.ppf(0.975, 3)  = 3.1824463052837078
//   stats.t.ppf(0.975, 18) = 2.1009220402410382
// The code takes its t quantiles from lib-r-math.js, whose qt(0.975, 3) is 3.1824462917889145
// (4.2e-9 below scipy's and R's) and qt(0.975, 18) 5.3e-12 above: the bounds are checked to
// a relative 1e-8 and 1e-11, that library's own error here; the rest to double rounding.
const t3 = 3.1824463052837078;

function expectRelative(actual: number, expected: number, tolerance: number): void {
  expect(Math.abs(actual / expected - 1), `${actual} against ${expected}`).toBeLessThanOrEqual(
    tolerance,
  );
}

describe('PooledSpread', () => {
  it('one window of equal shares: phi is Pearson’s X^2 / (m - 1)', () => {
    // Counts 30 20 25 25 of N = 100 on 4 shards: expected 25 each, so
    // X^2 = (25 + 25 + 0 + 0) / 25 = 2 and phi = 2 / 3 (Pearson's statistic, common practice).
    // Residuals r_i = (x - 25)^2 / (25 * 3/4): 4/3, 4/3, 0, 0; each 2/3 off phi, so
    // se = sqrt(4 (2/3)^2 * 4/3) / 4 = 0.3849001794597505 and the upper end 2/3 + t3 se;
    // the lower end is below 0, so 0.
    const spread = new PooledSpread(60);
    spread.learn([30, 20, 25, 25], 100, null, new Set());
    const estimate = spread.estimate(4);
    expect(estimate.phi).toBeCloseTo(2 / 3, 15);
    expectRelative(estimate.upper, 2 / 3 + t3 * 0.3849001794597505, 1e-8);
    expect(estimate.lower).toBe(0);
    expect(estimate.windows).toBe(1);
    expect(estimate.leftOut).toBe(0);
  });

  it('windows decay by 1 - 2 / (span + 1): with span 3 the older one weighs half', () => {
    // Window 1: 60 40 of 100 on 2 equal shares, r = 10^2 / (50 * 1/2) = 4 each; window 2:
    // 50 50, r = 0. Pooled mean per shard (0.5 * 4 + 0) / (0.5 + 1) = 4/3; no spread about it.
    const spread = new PooledSpread(3);
    spread.learn([60, 40], 100, null, new Set());
    spread.learn([50, 50], 100, null, new Set());
    const estimate = spread.estimate(2);
    expect(estimate.phi).toBeCloseTo(4 / 3, 15);
    expect(estimate.upper).toBeCloseTo(4 / 3, 15);
    expect(estimate.windows).toBe(2);
  });

  it('a shard standing far out of the rest is left out, and phi is the others’', () => {
    // 20 equal shards, N = 2000 (100 expected each, denominator 100 * 0.95 = 95): 17 at 90,
    // 2 at 85, one at 300. Residuals 100/95, 225/95 and 40000/95. The 300 stands about
    // 4.3 sd out, past 0.75 sqrt(19) = 3.27, and goes; then 225/95 stands 2.84 sd out of
    // the other 18, under 0.75 sqrt(18) = 3.18, and under the robust line (4 x the median
    // 100/95), so it stays. phi = (17 * 100 + 2 * 225) / (95 * 19) = 430/361.
    const counts = [...Array.from({ length: 17 }, () => 90), 85, 85, 300];
    const spread = new PooledSpread(60);
    spread.learn(counts, 2000, null, new Set());
    const estimate = spread.estimate(20);
    expect(estimate.leftOut).toBe(1);
    expect(estimate.phi).toBeCloseTo(430 / 361, 14);
    // scipy: 430/361 +- t.ppf(0.975, 18) * se, se = sqrt(sum d^2 * 19/18) / 19.
    expectRelative(estimate.upper, 1.391097033312603, 1e-11);
    expectRelative(estimate.lower, 0.9911744348314414, 1e-11);
  });

  it('a shard the judge leaves out adds nothing; fewer than two learned shards give phi 1, no bound', () => {
    const spread = new PooledSpread(60);
    expect(spread.estimate(3)).toEqual({
      phi: 1,
      upper: Infinity,
      lower: 0,
      windows: 0,
      leftOut: 0,
    });
    spread.learn([40, 30, 30], 100, null, new Set([0, 1]));
    expect(spread.estimate(3)).toEqual({
      phi: 1,
      upper: Infinity,
      lower: 0,
      windows: 1,
      leftOut: 0,
    });
    // Without shard 0 the other two carry the window: 30 against 100/3 expected,
    // r = (10/3)^2 / (100/3 * 2/3) = 1/2 each.
    const both = new PooledSpread(60);
    both.learn([40, 30, 30], 100, null, new Set([0]));
    expect(both.estimate(3).phi).toBeCloseTo(0.5, 14);
  });

  it('weighted shares use each shard’s own share; an empty window or one shard learns nothing', () => {
    // Shares 1/2, 1/4, 1/4 of N = 100: expected 50, 25, 25; counts 54, 26, 20 give
    // r = 16 / 25, 1 / 18.75, 25 / 18.75: phi = (48 + 4 + 100) / 75 / 3 = 152/225. The largest
    // stands 1.03 sd out, under 0.75 sqrt(2) = 1.06: none is left out.
    const spread = new PooledSpread(60);
    spread.learn([54, 26, 20], 100, Float64Array.from([0.5, 0.25, 0.25]), new Set());
    expect(spread.estimate(3).phi).toBeCloseTo(152 / 225, 15);
    expect(spread.estimate(3).leftOut).toBe(0);
    spread.learn([0, 0, 0], 0, null, new Set());
    spread.learn([5], 5, null, new Set());
    expect(spread.learnedWindows).toBe(1);
  });

  it('of three shards, two alike and one apart: the one apart is always left out', () => {
    // It stands 2 / sqrt(3) = 1.15 sd out, past 0.75 sqrt(2) = 1.06, whatever the values:
    // counts 60, 20, 20 on shares 1/2, 1/4, 1/4 give r = 4, 4/3, 4/3, and phi is 4/3.
    const spread = new PooledSpread(60);
    spread.learn([60, 20, 20], 100, Float64Array.from([0.5, 0.25, 0.25]), new Set());
    const estimate = spread.estimate(3);
    expect(estimate.leftOut).toBe(1);
    expect(estimate.phi).toBeCloseTo(4 / 3, 15);
  });
});

describe('tailDispersion', () => {
  it('the doc example: no over-dispersion, nothing to match', () => {
    expect(tailDispersion(100, 1, 1e-5)).toBe(1);
  });

  it('matches the negative binomial tail with a Poisson one, to the documented 1e-4', () => {
    // mean 100, phi 2, level 1e-5 (scipy 1.17.1): nbinom(n = 100, p = 1/2).isf(1e-5) = 169;
    // target = nbinom.logsf(168); optimize.brentq on log(special.gammainc(169 / f, 100 / f))
    // - target from f = 2 gives f = 2.152114459371236. The bisection returns the upper end
    // of a bracket 1e-4 wide (relative).
    const found = tailDispersion(100, 2, 1e-5);
    expect(found).toBeGreaterThanOrEqual(2.152114459371236);
    expect(found / 2.152114459371236 - 1).toBeLessThanOrEqual(1e-4);
  });

  it('returns phi itself where there is nothing to do', () => {
    expect(tailDispersion(0, 3, 1e-5)).toBe(3);
    expect(tailDispersion(100, Number.POSITIVE_INFINITY, 1e-5)).toBe(Number.POSITIVE_INFINITY);
    expect(tailDispersion(100, 0.5, 1e-5)).toBe(0.5);
  });
});
