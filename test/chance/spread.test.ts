import { describe, expect, it } from 'vitest';
import { makePlacement } from '../../src/chance/placement.js';
import { CHI_SQUARE_ONE_MEDIAN, robustDispersion, spreadTest } from '../../src/chance/spread.js';
import { reference, relativeError } from './reference-data.js';

describe('spread', () => {
  it('chi-square upper tail matches mpmath.gammainc (reference/exact.json) within 1e-6 relative (rounding of the built counts)', () => {
    for (const c of reference.chiSquare) {
      if (c.upper < 1e-300) continue;
      // Equal shares with many requests per shard: Haldane's variance is 2(m-1) + (m^2 - m^2 - 2m + 2)/N ~ 2(m-1).
      const m = c.df + 1;
      const n = 1e15;
      const fair = n / m;
      // Counts whose X^2 equals x: put the whole excess on one pair of shards.
      const counts = new Float64Array(m).fill(fair);
      const d = Math.sqrt((c.x * fair) / 2);
      counts[0] += d;
      counts[1] -= d;
      const s = spreadTest(makePlacement(n, m), counts);
      expect(relativeError(s.chiSquare, c.x)).toBeLessThan(1e-6);
      expect(relativeError(Math.exp(s.logProbability), c.upper)).toBeLessThan(1e-6);
    }
  });

  it("mean and variance of X^2 under unequal shares match Haldane's (1937) formulas by exact enumeration", () => {
    // Exhaustive: 3 shards with shares 1/2, 1/3, 1/6 and N = 7 requests; every placement weighed.
    const shares = [1 / 2, 1 / 3, 1 / 6];
    const n = 7;
    let mean = 0;
    let second = 0;
    let third = 0;
    const placements: { p: number; x: number }[] = [];
    const logFact = (k: number): number => (k <= 1 ? 0 : Math.log(k) + logFact(k - 1));
    for (let a = 0; a <= n; a++) {
      for (let b = 0; a + b <= n; b++) {
        const c = n - a - b;
        const p = Math.exp(
          logFact(n) -
            logFact(a) -
            logFact(b) -
            logFact(c) +
            a * Math.log(shares[0]) +
            b * Math.log(shares[1]) +
            c * Math.log(shares[2]),
        );
        const x = [a, b, c].reduce((s, v, i) => s + (v - n * shares[i]) ** 2 / (n * shares[i]), 0);
        mean += p * x;
        second += p * x * x;
        placements.push({ p, x });
      }
    }
    for (const { p, x } of placements) third += p * (x - mean) ** 3;
    const s = spreadTest(makePlacement(n, 3, [3, 2, 1]), [4, 2, 1]);
    expect(mean).toBeCloseTo(2, 10); // E[X^2] = m - 1 exactly
    expect(relativeError(s.nullVariance, second - mean * mean)).toBeLessThan(1e-10);
    expect(relativeError(s.nullThirdMoment, third)).toBeLessThan(1e-10);
  });

  it('equal shares: the third central moment of X^2 is 4(N-1)(m-1)(2N+m-6)/N^2 (exact enumeration)', () => {
    for (const [m, n] of [
      [4, 6],
      [7, 5],
      [12, 30],
    ]) {
      const law = exactEqualShareLaw(m, n);
      let mean = 0;
      for (const [x, p] of law) mean += p * x;
      let third = 0;
      for (const [x, p] of law) third += p * (x - mean) ** 3;
      const s = spreadTest(makePlacement(n, m), new Float64Array(m).fill(n / m));
      expect(relativeError(s.nullThirdMoment, third)).toBeLessThan(1e-9);
      expect(
        relativeError(s.nullThirdMoment, (4 * (n - 1) * (m - 1) * (2 * n + m - 6)) / n ** 2),
      ).toBeLessThan(1e-12);
    }
  });

  it('sparse windows: the exact size of the test stays within 1.3 alpha (exact enumeration of X^2)', () => {
    // The exact law of X^2 for equal shares, by enumerating the partitions of N into at most
    // m parts with their multinomial probabilities; the size is P(p-value <= alpha) under it.
    // (With the two-moment chi-square these sizes reach about 2 alpha at one request per shard.)
    const failures: string[] = [];
    for (const [m, n] of [
      [16, 16],
      [16, 32],
      [32, 16],
      [32, 32],
      [48, 48],
      [40, 20],
    ]) {
      const law = exactEqualShareLaw(m, n);
      for (const alpha of [0.05, 0.01, 0.001]) {
        let size = 0;
        for (const [x, p] of law) {
          const counts = countsWithChiSquare(x, m, n);
          if (Math.exp(spreadTest(makePlacement(n, m), counts).logProbability) <= alpha) size += p;
        }
        if (!(size <= 1.3 * alpha)) failures.push(`m ${m} N ${n} alpha ${alpha}: size ${size}`);
      }
    }
    expect(failures).toEqual([]);
  });

  it('dispersion is 1 on average and the robust dispersion ignores one hot shard', () => {
    const m = 1000;
    const counts = new Float64Array(m).fill(100);
    for (let i = 0; i < m; i++) counts[i] += i % 2 === 0 ? 10 : -10; // squared residual 1 everywhere
    counts[0] = 400;
    const placement = makePlacement(
      counts.reduce((a, b) => a + b, 0),
      m,
    );
    expect(spreadTest(placement, counts).dispersion).toBeGreaterThan(1.8); // (about 1000 + 900) / 999, worked by hand
    const robust = robustDispersion(placement, counts);
    // Median squared residual is about 1 (the hot shard moves the fair share by 0.3%), so
    // robust phi ~ 1 / 0.4549 (median of chi-square(1) = 0.454936, published tables).
    expect(robust).toBeGreaterThan(1.5);
    expect(robust).toBeLessThan(3);
    expect(CHI_SQUARE_ONE_MEDIAN).toBeCloseTo(0.4549364, 6);
  });
});

/** One count vector for each value of X^2 in the enumerated law (any with that value). */
const exampleCounts = new Map<string, Float64Array>();

function countsWithChiSquare(x: number, m: number, n: number): Float64Array {
  return exampleCounts.get(`${m}/${n}/${x}`)!;
}

/** Exact law of X^2 under equal shares: value -> probability, by partitions of N. */
function exactEqualShareLaw(m: number, n: number): Map<number, number> {
  const law = new Map<number, number>();
  const logFactorial = (k: number) => {
    let s = 0;
    for (let i = 2; i <= k; i++) s += Math.log(i);
    return s;
  };
  const parts: number[] = [];
  const visit = (left: number, largest: number) => {
    if (left === 0) {
      const multiplicity = new Map<number, number>();
      for (const v of parts) multiplicity.set(v, (multiplicity.get(v) ?? 0) + 1);
      let logP =
        logFactorial(n) + logFactorial(m) - logFactorial(m - parts.length) - n * Math.log(m);
      for (const v of parts) logP -= logFactorial(v);
      for (const c of multiplicity.values()) logP -= logFactorial(c);
      const sumSquares = parts.reduce((s, v) => s + v * v, 0);
      const x = Math.round(((m / n) * sumSquares - n) * 1e9) / 1e9;
      law.set(x, (law.get(x) ?? 0) + Math.exp(logP));
      const key = `${m}/${n}/${x}`;
      if (!exampleCounts.has(key)) {
        const counts = new Float64Array(m);
        parts.forEach((v, i) => (counts[i] = v));
        exampleCounts.set(key, counts);
      }
      return;
    }
    if (parts.length === m) return;
    for (let k = Math.min(left, largest); k >= 1; k--) {
      parts.push(k);
      visit(left - k, k);
      parts.pop();
    }
  };
  visit(n, n);
  return law;
}
