// Real verdicts for the screen tests: seeded built-in scenarios judged by the real judge
// with watch's defaults (null map, spread auto, 10 s windows, 2 s lateness). The scenario
// plants are their ground truth (src/scenario/built-in-scenarios.ts).
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { runScenario, type ScenarioRun } from '../../src/scenario/scenario-run.js';
import { SourceMeter } from '../../src/ui/source-meter.js';
import {
  buildScreenModel,
  buildWindowView,
  type ScreenContext,
  type ScreenModel,
  type ScreenState,
  type WindowView,
} from '../../src/ui/view-model.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';

export const startMs = Date.UTC(2025, 11, 1);
export const windowMs = 10_000;

export interface JudgedWindow {
  readonly window: ClosedWindow;
  readonly judgement: Judgement;
}

const cache = new Map<string, { run: ScenarioRun; judged: JudgedWindow[] }>();

/** The first `windows` windows of a scenario (seed 1), judged; cached per test file. */
export function judgeScenario(
  name: string,
  windows: number,
): { run: ScenarioRun; judged: JudgedWindow[] } {
  const key = `${name}/${windows}`;
  const cached = cache.get(key);
  if (cached !== undefined) return cached;
  const run = runScenario(name, { seed: 1, startMs, durationMs: windows * windowMs });
  const judge = new Judge(run.universe, { ...defaultJudgeSettings, null: 'map', hopMs: windowMs });
  const pipeline = new JudgingPipeline(run.universe, { windowMs, latenessMs: 2_000 }, judge);
  const judged: JudgedWindow[] = [];
  pipeline.events.on('window judged', (event) => judged.push(event));
  for (const record of run.records()) pipeline.record(record.ts, record.shard, record.count);
  pipeline.finish();
  const result = { run, judged };
  cache.set(key, result);
  return result;
}

/** The same windows prepared for the screen. */
export function scenarioViews(name: string, windows: number): WindowView[] {
  const { run, judged } = judgeScenario(name, windows);
  return judged.map(({ window, judgement }) =>
    buildWindowView(window, judgement, run.universe.shares, (index) => run.universe.idAt(index)),
  );
}

export const context: ScreenContext = {
  sourceLabel: 'scenario demo (seed 1)',
  windowMs,
  latenessMs: 2_000,
  confirm: 3,
  clear: 5,
  maxDetectable: 3,
};

/** A source that read 64 records carrying 4096 requests in a second, for frames that need one. */
export function steadySource(): ScreenState['source'] {
  let now = startMs;
  const meter = new SourceMeter('reading', () => now);
  meter.progress({ records: 0, requests: 0, rejected: 0, late: 0, newestEventTs: Number.NaN });
  now += 1000;
  meter.progress({ records: 64, requests: 4096, rejected: 2, late: 5, newestEventTs: now - 1000 });
  now += 500;
  return meter.reading();
}

/** A frame of the newest of `views` (or the one selected), at a terminal size. */
export function modelOf(
  views: readonly WindowView[],
  overrides: Partial<ScreenState> = {},
): ScreenModel {
  return buildScreenModel({
    context,
    windows: views,
    selected: null,
    paused: false,
    sort: 'evidence',
    help: false,
    source: steadySource(),
    size: { columns: 80, rows: 24 },
    ...overrides,
  });
}
