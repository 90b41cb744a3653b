import { describe, expect, it } from 'vitest';
import {
  formatClock,
  formatCount,
  formatDuration,
  formatP,
  formatPlain,
  formatRate,
  formatRelative,
  formatWindowLength,
  pStatement,
} from '../../src/ui/display-numbers.js';

describe('display numbers', () => {
  it('writes p-values short, never 0 for a tiny one, and flags the engine floor', () => {
    expect(formatP(0.28)).toBe('0.28');
    expect(formatP(0.0273)).toBe('0.0273');
    expect(formatP(0.001)).toBe('0.001');
    expect(formatP(0.00099)).toBe('9.9e-4');
    expect(formatP(2.17e-122)).toBe('2.2e-122');
    expect(formatP(1e-300)).toBe('<1e-300');
    expect(formatP(0.99999)).toBe('1');
  });

  it('says a p-value in a sentence as p = x, or p < 1e-300 at the floor (never "p = <1e-300")', () => {
    expect(pStatement(0.0273)).toBe('p = 0.0273');
    expect(pStatement(1e-300)).toBe('p < 1e-300');
    expect(pStatement(0)).toBe('p < 1e-300');
  });

  it('writes loads, rates, spans and times with their units', () => {
    expect(formatRelative(1.7781)).toBe('1.78x');
    expect(formatRelative(0)).toBe('0.00x');
    expect(formatRelative(250.4)).toBe('250x');
    expect(formatCount(1778)).toBe('1778');
    expect(formatCount(2.5e9)).toBe('2.50G');
    expect(formatCount(3.25e6)).toBe('3.25M');
    expect(formatCount(85.34)).toBe('85.3');
    expect(formatRate(6400)).toBe('6400/s');
    expect(formatRate(12.34)).toBe('12.3/s');
    expect(formatDuration(1500)).toBe('1.5 s');
    expect(formatDuration(45_000)).toBe('45 s');
    expect(formatDuration(600_000)).toBe('10 min');
    expect(formatDuration(3 * 86_400_000)).toBe('3 d');
    expect(formatWindowLength(10_000)).toBe('10 s');
    expect(formatWindowLength(60_000)).toBe('1 min');
    expect(formatWindowLength(1500)).toBe('1500 ms');
    expect(formatClock(Date.UTC(2025, 11, 1, 0, 0, 20))).toBe('00:00:20');
    expect(formatPlain(11.813)).toBe('11.8');
    expect(formatPlain(15747.2)).toBe('15747');
  });
});
