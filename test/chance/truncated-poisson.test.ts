import { describe, expect, it } from 'vitest';
import { cutCumulants, cutLogMass, cutMassFunction } from '../../src/chance/truncated-poisson.js';

describe('one-sided cut Poisson pieces: the documented examples (by hand)', () => {
  it('cutLogMass({mean 2, 0..0}) = log P(Poisson(2) = 0) = -2', () => {
    expect(cutLogMass({ mean: 2, lower: 0, upper: 0 })).toBeCloseTo(-2, 14);
  });

  it('the cut {mean 1, 0..1} is Bernoulli(1/2): mass function [0.5, 0.5], cumulants 0.5, 0.25, 0', () => {
    const cut = { mean: 1, lower: 0, upper: 1 };
    const logMass = cutLogMass(cut);
    const piece = cutMassFunction(cut, logMass, 10);
    expect(piece.offset).toBe(0);
    expect([...piece.values].map((v) => Number(v.toFixed(14)))).toEqual([0.5, 0.5]);
    const k = cutCumulants(cut, logMass);
    expect(k[0]).toBeCloseTo(0.5, 14);
    expect(k[1]).toBeCloseTo(0.25, 14);
    expect(k[2]).toBeCloseTo(0, 14);
  });
});
