import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { KeyAnalysis } from '../../src/keys/key-analysis.js';
import { defaultKeySketchSettings } from '../../src/keys/window-key-stats.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import { buildWindowView, type WindowView } from '../../src/ui/view-model.js';
import { context, modelOf, startMs, windowMs } from './judged-windows.js';

// Ground truth: the keyed drills' plants (src/scenario/built-in-scenarios.ts); the screen
// only words the causes key analysis gives (tested in test/keys/key-analysis.test.ts).

function keyedViews(name: string, durationMs: number): WindowView[] {
  const run = runScenario(name, { seed: 1, startMs, durationMs });
  const judge = new Judge(run.universe, { ...defaultJudgeSettings, null: 'map', hopMs: windowMs });
  const keys = new KeyAnalysis(run.universe, {
    windowMs,
    hopMs: windowMs,
    sketch: defaultKeySketchSettings,
    simulations: 200,
    alpha: defaultJudgeSettings.alpha,
    null: 'map',
    maxFlagged: 10,
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
  const views: WindowView[] = [];
  pipeline.events.on('window judged', ({ window, judgement }) =>
    views.push(
      buildWindowView(window, judgement, run.universe.shares, (index) => run.universe.idAt(index)),
    ),
  );
  for (const record of run.records())
    pipeline.record(record.ts, record.shard, record.count, record.key);
  pipeline.finish();
  return views;
}

describe('the verdict panel names the cause of a keyed hotspot', () => {
  it('hot-key: the second evidence line names the presale code at 80 columns', () => {
    const views = keyedViews('hot-key', 90_000);
    const model = modelOf(views.slice(0, 8), { context });
    expect(model.verdict.headline).toContain('HOTSPOT');
    expect(model.verdict.evidence[1]).toMatch(/^Cause: hot key presale:LFT-7781 carries ≥ \d+%/);
  });

  it('keyed-failover: the cause says moved from seat-42', () => {
    const views = keyedViews('keyed-failover', 90_000);
    const model = modelOf(views.slice(0, 8), { context });
    expect(model.verdict.headline).toContain('FAILOVER');
    expect(model.verdict.evidence[1]).toMatch(/^Cause: moved from seat-42 \(/);
  });
});
