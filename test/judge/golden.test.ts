import { readFileSync, writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { runScenario, type ScenarioRun } from '../../src/scenario/scenario-run.js';

// Golden verdict streams: two seeded scenarios judged with the default settings (null map,
// spread auto, 10 s windows, 2 s lateness). The test regenerates each stream and compares
// it with the stored file; UPDATE_GOLDEN=1 rewrites the files instead (review the diff).
// Numbers are compared with tolerances so that an accuracy-preserving change in the chance
// engine does not break them: p-values to a relative 1e-3 (docs/model.md's accuracy bar), other
// non-integers to a relative 1e-9, integers and words exactly.

const seed = 7;
const startMs = Date.UTC(2025, 11, 1);
const windowMs = 10_000;

function judgeScenario(name: string): { run: ScenarioRun; verdicts: Judgement[] } {
  const probe = runScenario(name, { seed, startMs, durationMs: 1 });
  const run = runScenario(name, {
    seed,
    startMs,
    durationMs: probe.definition.suggestedDurationMs,
  });
  const judge = new Judge(run.universe, { ...defaultJudgeSettings, null: 'map', hopMs: windowMs });
  const pipeline = new JudgingPipeline(run.universe, { windowMs, latenessMs: 2_000 }, judge);
  const verdicts: Judgement[] = [];
  pipeline.events.on('window judged', ({ judgement }) => verdicts.push(judgement));
  for (const record of run.records()) pipeline.record(record.ts, record.shard, record.count);
  pipeline.finish();
  return { run, verdicts };
}

function goldenPath(name: string): string {
  return fileURLToPath(new URL(`golden/${name}.jsonl`, import.meta.url));
}

const probabilityKeys = new Set(['p', 'binomialP']);

/** Differences between two parsed verdicts, as readable paths; empty when they agree. */
function differences(actual: unknown, expected: unknown, path: string, key = ''): string[] {
  if (typeof expected === 'number' && typeof actual === 'number') {
    if (Number.isInteger(expected) && Number.isInteger(actual) && !probabilityKeys.has(key)) {
      return actual === expected ? [] : [`${path}: ${actual} != ${expected}`];
    }
    const tolerance = probabilityKeys.has(key) ? 1e-3 : 1e-9;
    const scale = Math.max(Math.abs(expected), Math.abs(actual), 1e-300);
    return Math.abs(actual - expected) <= tolerance * scale
      ? []
      : [`${path}: ${actual} != ${expected}`];
  }
  if (typeof expected === 'string' && typeof actual === 'string' && key === 'spreadReason') {
    // The reason quotes rounded numbers; its words must agree, its numbers are checked above.
    const words = (text: string) => text.replace(/-?\d[\d.e+-]*/g, '#');
    return words(actual) === words(expected) ? [] : [`${path}: ${actual} != ${expected}`];
  }
  if (Array.isArray(expected) && Array.isArray(actual)) {
    if (actual.length !== expected.length)
      return [`${path}: length ${actual.length} != ${expected.length}`];
    return expected.flatMap((item, index) =>
      differences(actual[index], item, `${path}[${index}]`, key),
    );
  }
  if (
    expected !== null &&
    typeof expected === 'object' &&
    actual !== null &&
    typeof actual === 'object'
  ) {
    const keys = new Set([...Object.keys(expected), ...Object.keys(actual)]);
    return [...keys].flatMap((name) =>
      differences(
        (actual as Record<string, unknown>)[name],
        (expected as Record<string, unknown>)[name],
        `${path}.${name}`,
        name,
      ),
    );
  }
  return Object.is(actual, expected)
    ? []
    : [`${path}: ${JSON.stringify(actual)} != ${JSON.stringify(expected)}`];
}

/** Window indices lying wholly inside [from, until). */
function windowsWithin(from: number, until: number): number[] {
  const first = Math.ceil((from - startMs) / windowMs);
  const last = Math.floor((until - startMs) / windowMs) - 1;
  return Array.from({ length: Math.max(0, last - first + 1) }, (_, offset) => first + offset);
}

describe.each(['demo', 'zipf-keys'])('golden verdict stream: %s (seed 7)', (name) => {
  const { run, verdicts } = judgeScenario(name);

  it('matches the stored stream', () => {
    const lines = verdicts.map((verdict) => JSON.stringify(verdict));
    if (process.env.UPDATE_GOLDEN === '1') writeFileSync(goldenPath(name), lines.join('\n') + '\n');
    const stored = readFileSync(goldenPath(name), 'utf8').trim().split('\n');
    expect(lines).toHaveLength(stored.length);
    const found = stored.flatMap((line, index) =>
      differences(JSON.parse(lines[index]), JSON.parse(line), `window ${index}`),
    );
    expect(found).toEqual([]);
  });

  it('agrees with the ground truth of the seeded scenario', () => {
    for (const event of run.truth.events) {
      for (const index of windowsWithin(event.fullFrom, event.fullUntil)) {
        const verdict = verdicts[index];
        const flaggedAs = (shard: string | undefined, finding: string) =>
          verdict.flagged.some((flag) => flag.shard === shard && flag.finding === finding);
        switch (event.kind) {
          case 'hotspot':
            expect(verdict.findings, `window ${index}`).toContain('hotspot');
            expect(flaggedAs(event.shard, 'hotspot')).toBe(true);
            break;
          case 'failover':
            expect(verdict.pattern, `window ${index}`).toBe('failover');
            expect(flaggedAs(event.shard, 'cold') && flaggedAs(event.to, 'hotspot')).toBe(true);
            break;
          case 'lull':
            expect(verdict.findings, `window ${index}`).toEqual(['too little traffic']);
            break;
          case 'uneven':
            expect(verdict.findings, `window ${index}`).toEqual(['uneven']);
            break;
          case 'dead':
            expect(verdict.findings, `window ${index}`).toContain('cold');
            break;
        }
      }
    }
  });
});
