import { describe, expect, it } from 'vitest';
import {
  defaultSeed,
  durationOption,
  scenarioNamed,
  seedOption,
  startOption,
} from '../../src/cli/scenario-options.js';
import { builtInScenarios } from '../../src/scenario/built-in-scenarios.js';

describe('scenarioNamed', () => {
  it('a built-in scenario by name; any other name is refused with the list', () => {
    expect(scenarioNamed('demo')).toBe(builtInScenarios.get('demo'));
    expect(() => scenarioNamed('nope')).toThrow(
      `--scenario: "nope" is not a built-in scenario (${[...builtInScenarios.keys()].join(', ')})`,
    );
  });
});

describe('seedOption', () => {
  it('1 by default; a whole number up to 2^32 - 1', () => {
    expect(defaultSeed).toBe(1);
    expect(seedOption(undefined)).toBe(1);
    expect(seedOption('0')).toBe(0);
    expect(seedOption('4294967295')).toBe(4294967295);
    expect(() => seedOption('4294967296')).toThrow(
      '--seed: "4294967296" must be at most 4294967295',
    );
    expect(() => seedOption('1.5')).toThrow('--seed: "1.5" is not a whole number');
  });
});

describe('durationOption', () => {
  it('the fallback when absent, else a duration', () => {
    expect(durationOption(undefined, 123)).toBe(123);
    expect(durationOption('90s', 123)).toBe(90_000);
    expect(() => durationOption('0', 123)).toThrow('--duration: "0" must be a duration above zero');
  });
});

describe('startOption', () => {
  // 2025-12-01T00:00:00Z is 1764547200000 ms after the Unix epoch (common practice).
  it('ISO-8601 with a zone or epoch milliseconds; the fallback when absent', () => {
    expect(startOption(undefined, 42)).toBe(42);
    expect(startOption('2025-12-01T00:00:00Z', 0)).toBe(1764547200000);
    expect(startOption('2025-12-01T01:00:00+01:00', 0)).toBe(1764547200000);
    expect(startOption(' 1764547200000 ', 0)).toBe(1764547200000);
  });

  it('a time without a zone, or no time at all, is refused with examples', () => {
    const problem =
      'is not a time (ISO-8601 with a zone, e.g. 2025-12-01T00:00:00Z, or epoch milliseconds)';
    expect(() => startOption('2025-12-01T00:00:00', 0)).toThrow(
      `--start: "2025-12-01T00:00:00" ${problem}`,
    );
    expect(() => startOption('yesterday', 0)).toThrow(`--start: "yesterday" ${problem}`);
  });
});
