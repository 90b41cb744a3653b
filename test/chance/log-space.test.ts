import { describe, expect, it } from 'vitest';
import {
  log1mExp,
  logAddExp,
  logDifference,
  probabilityFromLog,
} from '../../src/chance/log-space.js';

describe('log-space arithmetic: the documented examples (by hand)', () => {
  it('adds, subtracts and complements probabilities held as logs', () => {
    expect(logAddExp(Math.log(0.25), Math.log(0.5))).toBeCloseTo(Math.log(0.75), 15);
    expect(log1mExp(Math.log(0.25))).toBeCloseTo(Math.log(0.75), 15);
    expect(logDifference(Math.log(0.75), Math.log(0.25))).toBeCloseTo(Math.log(0.5), 15);
  });

  it('reports below 1e-300 as 1e-300, an impossible event as 0 (docs/model.md)', () => {
    expect(probabilityFromLog(-800)).toBe(1e-300);
    expect(probabilityFromLog(-Infinity, false)).toBe(0);
    // A possible event whose log underflowed is still never 0.
    expect(probabilityFromLog(-Infinity)).toBe(1e-300);
  });

  it('keeps a tail near 1 apart from 1: log1mExp of a tiny log', () => {
    // 1 - e^-1e-20 = 1e-20 to first order (Taylor, by hand): no 1 - (1 - tiny).
    expect(Math.exp(log1mExp(-1e-20))).toBeCloseTo(1e-20, 30);
  });
});
