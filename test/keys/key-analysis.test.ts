import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { KeyAnalysis } from '../../src/keys/key-analysis.js';
import { defaultKeySketchSettings } from '../../src/keys/window-key-stats.js';
import { runScenario, type ScenarioRun } from '../../src/scenario/scenario-run.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

// Ground truth: what each seeded drill planted (ScenarioRun.truth), checked window by window
// against the cause key analysis gives. Windows are 10 s; the plants run from 1:00 to 3:00,
// and 2:30 of traffic is judged (5 windows before the plant, 9 inside it).

const startMs = Date.UTC(2025, 11, 1);
const windowMs = 10_000;

function judged(name: string, durationMs = 150_000): { run: ScenarioRun; verdicts: Judgement[] } {
  const run = runScenario(name, { seed: 7, startMs, durationMs });
  const judge = new Judge(run.universe, { ...defaultJudgeSettings, null: 'map', hopMs: windowMs });
  const keys = new KeyAnalysis(run.universe, {
    windowMs,
    hopMs: windowMs,
    sketch: defaultKeySketchSettings,
    simulations: 500,
    alpha: defaultJudgeSettings.alpha,
    null: 'map',
    maxFlagged: defaultJudgeSettings.maxFlagged,
  });
  const pipeline = new JudgingPipeline(
    run.universe,
    { windowMs, latenessMs: 2_000 },
    judge,
    Date.now,
    {
      keys,
    },
  );
  const verdicts: Judgement[] = [];
  pipeline.events.on('window judged', ({ judgement }) => verdicts.push(judgement));
  for (const record of run.records())
    pipeline.record(record.ts, record.shard, record.count, record.key);
  pipeline.finish();
  return { run, verdicts };
}

function inside(run: ScenarioRun, verdict: Judgement): boolean {
  const plant = run.truth.events[0];
  const start = Date.parse(verdict.window.start);
  return start >= plant.fullFrom && start + windowMs <= plant.fullUntil;
}

describe('causes on the keyed drills', () => {
  it('hot-key: the presale code is named the hot key of its shard in every planted window, and nowhere before', () => {
    const { run, verdicts } = judged('hot-key');
    const plant = run.truth.events[0];
    expect(plant.kind).toBe('hot key');
    const planted = verdicts.filter((verdict) => inside(run, verdict));
    expect(planted.length).toBe(9);
    for (const verdict of planted) {
      const cause = verdict.keys?.causes.find((entry) => entry.shard === plant.shard);
      expect(cause?.cause).toBe('hot key');
      expect(cause?.topKey?.key).toBe(plant.key);
      expect(cause?.topKeyShare).toBeGreaterThanOrEqual(0.5);
      expect(verdict.keys?.replacement).not.toBeNull();
    }
    for (const verdict of verdicts.filter(
      (entry) => Date.parse(entry.window.end) <= plant.beginsAt,
    )) {
      expect(verdict.keys?.causes.some((entry) => entry.shard === plant.shard) ?? false).toBe(
        false,
      );
    }
  });

  it('biased-partitioner: seat-17 is a placement fault on its key count in every planted window, and nowhere before', () => {
    const { run, verdicts } = judged('biased-partitioner');
    const plant = run.truth.events[0];
    expect(plant.kind).toBe('biased partitioner');
    const planted = verdicts.filter((verdict) => inside(run, verdict));
    expect(planted.length).toBe(9);
    for (const verdict of planted) {
      const cause = verdict.keys?.causes.find((entry) => entry.shard === plant.shard);
      expect(cause?.cause).toBe('placement');
      expect(cause?.basis).toBe('keys per shard');
      expect(cause?.topKeyShareAtMost).toBeLessThan(0.5);
      expect(verdict.keys?.placement?.rejects).toBe(true);
      expect(verdict.keys?.placement?.fullest.shard).toBe(plant.shard);
    }
    for (const verdict of verdicts.filter(
      (entry) => Date.parse(entry.window.end) <= plant.beginsAt,
    )) {
      expect(verdict.keys?.placement?.rejects).toBe(false);
      expect(verdict.keys?.causes.some((entry) => entry.cause === 'placement') ?? false).toBe(
        false,
      );
    }
  });

  it('keyed-failover: seat-43 is named moved from seat-42 in every planted window', () => {
    const { run, verdicts } = judged('keyed-failover');
    const plant = run.truth.events[0];
    expect(plant.kind).toBe('failover');
    const planted = verdicts.filter((verdict) => inside(run, verdict));
    expect(planted.length).toBe(9);
    for (const verdict of planted) {
      expect(verdict.pattern).toBe('failover');
      const cause = verdict.keys?.causes.find((entry) => entry.shard === plant.to);
      expect(cause?.cause).toBe('moved');
      expect(cause?.from?.shard).toBe(plant.shard);
      // The dead shard's whole fair share is missing, and its keys show up on the neighbour.
      expect(cause?.from?.deficit).toBeGreaterThan(0.9 * (verdict.requests / 64));
      expect((cause?.distinct ?? 0) / (cause?.distinctExpected ?? 1)).toBeGreaterThan(1.7);
    }
  });

  it('count reports carry no keys: verdicts keep their shape (no keys field)', () => {
    const { verdicts } = judged('hotspot', 30_000);
    expect(verdicts.length).toBeGreaterThan(0);
    for (const verdict of verdicts) expect('keys' in verdict).toBe(false);
  });
});

describe('keys from the wire', () => {
  it('a hostile key is kept cut and marked, and the verdict line stays one line of JSON', () => {
    const universe = ShardUniverse.ofCount(2);
    const judge = new Judge(universe, { ...defaultJudgeSettings, hopMs: windowMs });
    const keys = new KeyAnalysis(universe, {
      windowMs,
      hopMs: windowMs,
      sketch: defaultKeySketchSettings,
      simulations: 100,
      alpha: defaultJudgeSettings.alpha,
      null: 'uniform',
      maxFlagged: 10,
    });
    const pipeline = new JudgingPipeline(universe, { windowMs }, judge, Date.now, { keys });
    const lines: string[] = [];
    pipeline.events.on('window judged', ({ judgement }) => lines.push(JSON.stringify(judgement)));
    const hostile = '\u001b[2J\n"}' + 'x'.repeat(10_000);
    for (let at = 0; at < 3000; at++) pipeline.record(startMs + at, '0', 1, hostile);
    for (let at = 0; at < 100; at++) pipeline.record(startMs + at, '1', 1, `k${at}`);
    pipeline.finish();
    expect(lines).toHaveLength(1);
    expect(lines[0]).not.toContain('\n');
    const verdict = JSON.parse(lines[0]) as Judgement;
    const cause = verdict.keys?.causes[0];
    expect(cause?.cause).toBe('hot key');
    expect(cause?.topKey?.key.length).toBeLessThanOrEqual(128);
    expect(cause?.topKey?.key).toMatch(/~[0-9a-f]{8}$/);
    expect(cause?.topKey?.key.startsWith('\u001b[2J\n"}')).toBe(true);
  });
});
