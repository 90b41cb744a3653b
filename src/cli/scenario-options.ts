import { parseIsoTimestamp } from '../ingest/timestamp.js';
import { builtInScenarios } from '../scenario/built-in-scenarios.js';
import type { ScenarioDefinition } from '../scenario/scenario-definition.js';
import { UsageError } from '../errors/usage-error.js';
import { duration, wholeNumber } from './option-values.js';

/**
 * The options `watch` and `simulate` share for a built-in scenario: which one, its seed,
 * its length and its start. Read here once so both commands accept and reject the same.
 */

/** Default `--seed`: a fixed one, so the same command shows the same run. */
export const defaultSeed = 1;

/** The scenario called NAME, or a UsageError listing the built-in names. */
export function scenarioNamed(name: string): ScenarioDefinition {
  const definition = builtInScenarios.get(name);
  if (definition === undefined) {
    throw new UsageError(
      '--scenario',
      name,
      `is not a built-in scenario (${[...builtInScenarios.keys()].join(', ')})`,
    );
  }
  return definition;
}

/** `--seed S`: a whole number from 0 to 2^32 - 1. */
export function seedOption(raw: string | undefined): number {
  if (raw === undefined) return defaultSeed;
  const seed = wholeNumber('--seed', raw);
  if (seed > 0xffff_ffff) throw new UsageError('--seed', raw, 'must be at most 4294967295');
  return seed;
}

/** `--duration D` in ms, or `fallback` when absent. */
export function durationOption(raw: string | undefined, fallback: number): number {
  return raw === undefined ? fallback : duration('--duration', raw);
}

/**
 * `--start TIME`: ISO-8601 with a zone, or epoch milliseconds; absent: `fallback`.
 * The scenario's ticks start there, so a start on a window boundary gives full windows.
 */
export function startOption(raw: string | undefined, fallback: number): number {
  if (raw === undefined) return fallback;
  const text = raw.trim();
  const ms = /^\d+$/.test(text) ? Number(text) : parseIsoTimestamp(text);
  if (!Number.isSafeInteger(ms) || ms < 0) {
    throw new UsageError(
      '--start',
      raw,
      'is not a time (ISO-8601 with a zone, e.g. 2025-12-01T00:00:00Z, or epoch milliseconds)',
    );
  }
  return ms;
}
