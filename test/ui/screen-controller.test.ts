import { describe, expect, it } from 'vitest';
import { ScreenController } from '../../src/ui/screen-controller.js';
import { SourceMeter } from '../../src/ui/source-meter.js';
import { context, judgeScenario } from './judged-windows.js';
import { ManualScheduler } from './manual-scheduler.js';

function controllerWith(scheduler: ManualScheduler, frameMs = 250) {
  const { run } = judgeScenario('demo', 6);
  return new ScreenController({
    context,
    size: { columns: 80, rows: 24 },
    meter: new SourceMeter('reading', () => scheduler.now()),
    shares: () => run.universe.shares,
    idAt: (index) => run.universe.idAt(index),
    frameMs,
    refreshMs: 1000,
    scheduler,
  });
}

const totals = (records: number) => ({
  records,
  requests: records,
  rejected: 0,
  late: 0,
  newestEventTs: 0,
});

describe('ScreenController frames', () => {
  it('publishes at most one frame per frame interval however many updates arrive', () => {
    const scheduler = new ManualScheduler();
    const controller = controllerWith(scheduler);
    for (let batch = 1; batch <= 1000; batch++) controller.sourceProgress(totals(batch * 64));
    expect(controller.framesPublished).toBe(0);
    scheduler.advance(0);
    expect(controller.framesPublished).toBe(1);
    // Updates inside the next 250 ms wait for its end.
    scheduler.advance(10);
    for (let batch = 0; batch < 1000; batch++) controller.sourceProgress(totals(64_000 + batch));
    scheduler.advance(200);
    expect(controller.framesPublished).toBe(1);
    scheduler.advance(40);
    expect(controller.framesPublished).toBe(2);
    // Ten seconds of a flood: 4 frames a second, plus nothing for the refresh (it coalesces).
    for (let step = 0; step < 1000; step++) {
      controller.sourceProgress(totals(100_000 + step));
      scheduler.advance(10);
    }
    expect(controller.framesPublished).toBeGreaterThanOrEqual(2 + 39);
    expect(controller.framesPublished).toBeLessThanOrEqual(2 + 41);
  });

  it('refreshes about once a second when nothing happens, so ages stay current', () => {
    const scheduler = new ManualScheduler();
    const controller = controllerWith(scheduler);
    scheduler.advance(10_000);
    expect(controller.framesPublished).toBe(10);
    controller.close();
    scheduler.advance(10_000);
    expect(controller.framesPublished).toBe(10);
  });

  it('keys: pause pins the window on show while new windows are kept', () => {
    const scheduler = new ManualScheduler();
    const controller = controllerWith(scheduler);
    const { judged } = judgeScenario('demo', 6);
    for (const { window, judgement } of judged.slice(0, 3))
      controller.windowJudged(window, judgement);
    controller.command('toggle pause');
    for (const { window, judgement } of judged.slice(3)) controller.windowJudged(window, judgement);
    scheduler.advance(300);
    let model = controller.getSnapshot();
    expect(model.header.mode).toBe('‖ PAUSED');
    expect(model.header.position).toBe('window 3 of 6 · 3 newer');
    expect(model.verdict.windowText).toBe('00:00:20–00:00:30');
    controller.command('step back');
    controller.command('step back');
    controller.command('step back');
    scheduler.advance(300);
    model = controller.getSnapshot();
    expect(model.header.position).toBe('window 1 of 6 · 5 newer');
    controller.command('step forward');
    scheduler.advance(300);
    expect(controller.getSnapshot().header.position).toBe('window 2 of 6 · 4 newer');
    controller.command('toggle pause');
    scheduler.advance(300);
    model = controller.getSnapshot();
    expect(model.header.mode).toBe('● LIVE');
    expect(model.header.position).toBe('newest of 6');
  });

  it('keeps a bounded history and the selection on the same window as old ones drop', () => {
    const scheduler = new ManualScheduler();
    const { run, judged } = judgeScenario('demo', 6);
    const controller = new ScreenController({
      context,
      size: { columns: 80, rows: 24 },
      meter: new SourceMeter('reading', () => scheduler.now()),
      shares: () => run.universe.shares,
      idAt: (index) => run.universe.idAt(index),
      historyLimit: 4,
      scheduler,
    });
    for (const { window, judgement } of judged.slice(0, 4))
      controller.windowJudged(window, judgement);
    controller.command('step back');
    for (const { window, judgement } of judged.slice(4)) controller.windowJudged(window, judgement);
    scheduler.advance(300);
    const model = controller.getSnapshot();
    expect(model.history.slots).toHaveLength(4);
    // Window 3 of 6 (00:00:20) stays on show as windows 1 and 2 drop out.
    expect(model.verdict.windowText).toBe('00:00:20–00:00:30');
    expect(model.header.position).toBe('window 1 of 4 · 3 newer');
  });

  it('quit calls its listeners once', () => {
    const controller = controllerWith(new ManualScheduler());
    let calls = 0;
    controller.onQuit(() => calls++);
    controller.command('quit');
    controller.command('quit');
    expect(calls).toBe(1);
    expect(controller.quitRequested).toBe(true);
    controller.onQuit(() => calls++);
    expect(calls).toBe(2);
  });
});
