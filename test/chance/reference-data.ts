import { readFileSync } from 'node:fs';

/**
 * Reference values computed outside the project by test/chance/reference/make-reference.py
 * (python-flint 0.9.0 ball arithmetic at 400 bits, exact Stirling numbers, and
 * scipy.stats.binom 1.17.1); see that script's header for each method.
 */
export interface ReferenceData {
  chiSquare: { df: number; x: number; upper: number }[];
  gammaRatios: { a: number; x: number; lower: number; upper: number }[];
  tails: {
    law: 'binomial' | 'poisson';
    n?: number;
    share?: number;
    mean?: number;
    k: number;
    atMost: number;
    atLeast: number;
  }[];
  equalMax: { shards: number; requests: number; atLeast: number; p: number }[];
  equalMin: { shards: number; requests: number; atMost: number; p: number }[];
  weightedMax: {
    weights: number[];
    requests: number;
    relative: [number, number];
    thresholds: number[];
    p: number;
  }[];
  weightedMin: {
    weights: number[];
    requests: number;
    relative: [number, number];
    thresholds: number[];
    p: number;
  }[];
  empty: {
    shards: number;
    requests: number;
    atLeast?: number;
    p?: number;
    mean?: number;
    variance?: number;
  }[];
  twoThree: { shards: number; requests: number; atLeast: number; p: number }[];
}

export const reference: ReferenceData = JSON.parse(
  readFileSync(new URL('./reference/exact.json', import.meta.url), 'utf8'),
) as ReferenceData;

/** |a - b| / |b|, with 0/0 = 0. */
export function relativeError(actual: number, expected: number): number {
  if (expected === 0) return Math.abs(actual);
  return Math.abs(actual - expected) / Math.abs(expected);
}

/**
 * Reference values at window totals from 1e12 to 2^53 - 1, computed outside the project by
 * test/chance/reference/make-huge-reference.py (mpmath 1.3.0 beta integrals at 30 digits,
 * Euler-Maclaurin sums for three shards, scipy 1.17.1 for 1e5 shards, the normal limit by
 * Fourier inversion for 8 to 10 unequal shares); see its header.
 */
export interface HugeReference {
  binomial: { n: number; share: number; k: number; logAtLeast: number; logAtMost: number }[];
  extremes: {
    n: number;
    shares: number[];
    side: 'high' | 'low';
    thresholds: number[];
    p: number;
  }[];
  manyWeighted: {
    n: number;
    side: 'high' | 'low';
    relative: number;
    lower: number;
    upper: number;
  }[];
  /** 8 to 10 unequal shares: S1 from mpmath plus the rest of inclusion-exclusion in the normal limit. */
  fewWeighted: {
    n: number;
    shares: number[];
    side: 'high' | 'low';
    thresholds: number[];
    p: number;
    /** The first Bonferroni sum (mpmath beta integrals). */
    s1: number;
    /** The reference's own error bound, relative (normal limit's skewness term and quadrature). */
    error: number;
  }[];
}

export const huge: HugeReference = JSON.parse(
  readFileSync(new URL('./reference/huge.json', import.meta.url), 'utf8'),
) as HugeReference;
