import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import { LiveScreen } from '../../src/ui/live-screen.js';
import { ScreenController } from '../../src/ui/screen-controller.js';
import { SourceMeter } from '../../src/ui/source-meter.js';
import { context, judgeScenario, startMs, windowMs } from './judged-windows.js';
import { ManualScheduler } from './manual-scheduler.js';

const colour = /\u001b\[[0-9;]*m/g;
// Keys as a terminal sends them (ECMA-48 cursor keys in normal mode; ESC alone).
const left = '\u001b[D';
const right = '\u001b[C';
const escape = '\u001b';

/** Lets Ink's input handling and React's commit run. */
const settle = () => new Promise<void>((resolve) => setTimeout(resolve, 5));

function liveScreen(windows: number) {
  const scheduler = new ManualScheduler();
  const { run, judged } = judgeScenario('demo', 12);
  const controller = new ScreenController({
    context,
    size: { columns: 80, rows: 24 },
    meter: new SourceMeter('reading', () => scheduler.now()),
    shares: () => run.universe.shares,
    idAt: (index) => run.universe.idAt(index),
    scheduler,
  });
  for (const { window, judgement } of judged.slice(0, windows)) {
    controller.windowJudged(window, judgement);
  }
  scheduler.advance(300);
  const instance = render(<LiveScreen feed={controller} />);
  const frame = () => (instance.lastFrame() ?? '').replace(colour, '');
  /** Types a key, lets the next frame out, and returns it. */
  const press = async (key: string) => {
    instance.stdin.write(key);
    await settle();
    scheduler.advance(300);
    await settle();
    return frame();
  };
  const judge = (from: number, to: number) => {
    for (const { window, judgement } of judged.slice(from, to)) {
      controller.windowJudged(window, judgement);
    }
    scheduler.advance(300);
  };
  return { controller, instance, frame, press, judge };
}

describe('keys', () => {
  it('p pauses on the window on show while windows keep coming, and p resumes', async () => {
    const screen = liveScreen(4);
    expect(screen.frame()).toContain('● LIVE · newest of 4');
    let frame = await screen.press('p');
    expect(frame).toContain('‖ PAUSED · newest of 4');
    screen.judge(4, 7);
    await settle();
    frame = screen.frame();
    expect(frame).toContain('‖ PAUSED · window 4 of 7 · 3 newer');
    expect(frame).toContain('00:00:30–00:00:40');
    frame = await screen.press('p');
    expect(frame).toContain('● LIVE · newest of 7');
    expect(frame).toContain('00:01:00–00:01:10');
    screen.instance.unmount();
  });

  it('← and → step through the kept windows; stepping pauses', async () => {
    const screen = liveScreen(6);
    let frame = await screen.press(left);
    expect(frame).toContain('‖ PAUSED · window 5 of 6 · 1 newer');
    expect(frame).toContain('00:00:40–00:00:50');
    frame = await screen.press(left);
    frame = await screen.press(left);
    frame = await screen.press(left);
    expect(frame).toContain('window 2 of 6');
    // Window 2 (00:00:10) was chance, before the planted hotspot.
    expect(frame).toContain('· CHANCE');
    frame = await screen.press(right);
    expect(frame).toContain('window 3 of 6');
    expect(frame).toContain('▲ HOTSPOT on seat-17');
    frame = await screen.press(']');
    frame = await screen.press(']');
    frame = await screen.press(']');
    frame = await screen.press(']');
    expect(frame).toContain('‖ PAUSED · newest of 6');
    screen.instance.unmount();
  });

  it('s cycles the sort; ? opens the help and Esc closes it', async () => {
    const screen = liveScreen(4);
    expect(await screen.press('s')).toContain('sorted by load');
    expect(await screen.press('s')).toContain('sorted by shard');
    expect(await screen.press('s')).toContain('sorted by evidence');
    let frame = await screen.press('?');
    expect(frame).toContain('Help · ? or Esc closes it');
    expect(frame).not.toContain('Shards ·');
    frame = await screen.press(escape);
    expect(frame).not.toContain('Help ·');
    expect(frame).toContain('Shards ·');
    screen.instance.unmount();
  });

  it('q and Ctrl+C ask to quit', async () => {
    for (const key of ['q', '\u0003']) {
      const screen = liveScreen(2);
      let quit = false;
      screen.controller.onQuit(() => (quit = true));
      await screen.press(key);
      expect(quit).toBe(true);
      screen.instance.unmount();
    }
  });
});

describe('redraw rate', () => {
  it('stays at a few frames a second under a fast source', async () => {
    // Six minutes of the demo as fast as it can be judged, one tick of records (64) per
    // batch with a turn of the event loop between batches, as watch feeds the screen.
    const run = runScenario('demo', { seed: 1, startMs, durationMs: 6 * 60_000 });
    const judge = new Judge(run.universe, {
      ...defaultJudgeSettings,
      null: 'map',
      hopMs: windowMs,
    });
    const pipeline = new JudgingPipeline(run.universe, { windowMs, latenessMs: 2_000 }, judge);
    const controller = new ScreenController({
      context,
      size: { columns: 100, rows: 30 },
      meter: new SourceMeter('reading'),
      shares: () => run.universe.shares,
      idAt: (index) => run.universe.idAt(index),
    });
    let windows = 0;
    pipeline.events.on('window judged', ({ window, judgement }) => {
      windows++;
      controller.windowJudged(window, judgement);
    });
    const instance = render(<LiveScreen feed={controller} />);
    const began = Date.now();
    let records = 0;
    let batches = 0;
    let batch = 0;
    for (const record of run.records()) {
      pipeline.record(record.ts, record.shard, record.count);
      records++;
      if (++batch === 64) {
        batch = 0;
        batches++;
        controller.sourceProgress({
          records,
          requests: records,
          rejected: 0,
          late: 0,
          newestEventTs: record.ts,
        });
        await new Promise<void>((resolve) => setImmediate(resolve));
      }
    }
    pipeline.finish();
    // The throttled last frame comes at most one frame interval later; on a busy machine the
    // timer fires late, so wait for it (bounded) rather than for a fixed time.
    const lastFrame = () => (instance.lastFrame() ?? '').replace(colour, '');
    for (let waited = 0; waited < 5000 && !lastFrame().includes('newest of 36'); waited += 50) {
      await new Promise<void>((resolve) => setTimeout(resolve, 50));
    }
    const elapsedMs = Date.now() - began;
    const renders = instance.frames.length;
    const last = lastFrame();
    instance.unmount();
    controller.close();
    expect(windows).toBe(36);
    expect(batches).toBeGreaterThan(300);
    // Four frames a second at most, plus the first frame and one at each end of the span.
    expect(renders).toBeLessThanOrEqual(Math.ceil(elapsedMs / 250) + 3);
    // It did keep drawing while the run went on, and the last frame has the last window.
    expect(renders).toBeGreaterThanOrEqual(3);
    expect(last).toContain('newest of 36');
  });
});
