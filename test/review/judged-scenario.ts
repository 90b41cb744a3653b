// A scenario judged through watch's pipeline, for the review tests: every closed window with
// its judgement, as `watch --scenario NAME --pace fast` would record it.
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings, type JudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { ReviewBuilder, type ReviewModel } from '../../src/review/review-model.js';
import type { RecordedSettings } from '../../src/record/recording-line.js';
import { KeyAnalysis } from '../../src/keys/key-analysis.js';
import { defaultKeySketchSettings } from '../../src/keys/window-key-stats.js';
import { runScenario, type ScenarioRun } from '../../src/scenario/scenario-run.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import type { ShardUniverse } from '../../src/window/shard-universe.js';

export const startMs = Date.parse('2025-12-01T00:00:00Z');

export interface JudgedScenario {
  readonly run: ScenarioRun;
  readonly universe: ShardUniverse;
  readonly settings: JudgeSettings;
  readonly windows: { window: ClosedWindow; judgement: Judgement }[];
  readonly recorded: RecordedSettings;
}

export function judgeScenario(
  name: string,
  options: {
    seed?: number;
    durationMs?: number;
    windowMs?: number;
    judge?: Partial<JudgeSettings>;
    /** Run key analysis on the records' keys, as watch does by default. */
    keys?: boolean;
  } = {},
): JudgedScenario {
  const windowMs = options.windowMs ?? 10_000;
  const run = runScenario(name, {
    seed: options.seed ?? 1,
    startMs,
    durationMs: options.durationMs ?? run0(name),
  });
  const settings: JudgeSettings = {
    ...defaultJudgeSettings,
    null: 'map',
    ...options.judge,
    hopMs: windowMs,
  };
  const keys = options.keys
    ? new KeyAnalysis(run.universe, {
        windowMs,
        hopMs: windowMs,
        sketch: defaultKeySketchSettings,
        simulations: 300,
        alpha: settings.alpha,
        null: settings.null,
        maxFlagged: settings.maxFlagged,
      })
    : undefined;
  const pipeline = new JudgingPipeline(
    run.universe,
    { windowMs, hopMs: windowMs, latenessMs: 2000 },
    new Judge(run.universe, settings),
    Date.now,
    keys === undefined ? {} : { keys },
  );
  const windows: { window: ClosedWindow; judgement: Judgement }[] = [];
  pipeline.events.on('window judged', (judged) => windows.push(judged));
  for (const record of run.records())
    pipeline.record(record.ts, record.shard, record.count, options.keys ? record.key : undefined);
  pipeline.finish();
  return {
    run,
    universe: run.universe,
    settings,
    windows,
    recorded: {
      source: { scenario: name, seed: options.seed ?? 1 },
      windowMs,
      latenessMs: 2000,
      declaredUniverse: true,
      ...settings,
    },
  };
}

function run0(name: string): number {
  return runScenario(name, { seed: 1, startMs, durationMs: 1000 }).definition.suggestedDurationMs;
}

/** The review model of a judged scenario, as `review` builds it from the same windows. */
export function reviewOf(judged: JudgedScenario): ReviewModel {
  const builder = new ReviewBuilder({
    source: 'test',
    judgedHere: true,
    settings: { ...judged.recorded, spread: judged.settings.spread },
  });
  for (const { window, judgement } of judged.windows) {
    builder.add({
      start: window.start,
      end: window.end,
      counts: window.counts,
      total: window.total,
      shardIds: judged.universe.ids,
      shares: null,
      judgement,
    });
  }
  return builder.build();
}
