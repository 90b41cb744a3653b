// The pipeline with a judge that answers later (a judge on another thread): the verdict
// stream must be the one the same Judge gives on the reading thread, event for event, with
// a bounded backlog and the run failing when judging fails. The reference is the pipeline
// with the Judge called directly, itself checked against published values elsewhere
// (test/judge/golden.test.ts, test/chance/).
import { setTimeout as sleep } from 'node:timers/promises';
import { describe, expect, it } from 'vitest';
import { feedRecords } from '../../src/cli/record-feed.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import {
  JudgingPipeline,
  maxPendingWindows,
  type WindowJudge,
} from '../../src/judge/judging-pipeline.js';
import type { RecordSource } from '../../src/ingest/record-source.js';
import { KeyAnalysis } from '../../src/keys/key-analysis.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import type { CountRecord } from '../../src/window/count-record.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import type { ShardUniverse } from '../../src/window/shard-universe.js';

const second = 1000;

/** A Judge whose verdicts come back after a turn of the event loop, as a thread's do. */
class LaterJudge implements WindowJudge {
  readonly judge: (window: ClosedWindow) => Promise<Judgement>;
  inFlight = 0;
  mostInFlight = 0;
  constructor(inner: Judge, fail?: (window: ClosedWindow) => boolean) {
    this.judge = async (window) => {
      // The judge copies the window, as a message to a worker does: later changes by the
      // reading thread must not matter.
      const copy = structuredClone(window);
      this.inFlight++;
      this.mostInFlight = Math.max(this.mostInFlight, this.inFlight);
      await sleep(0);
      this.inFlight--;
      if (fail?.(copy) === true) throw new Error('worker out of memory');
      return structuredClone(inner.judge(copy));
    };
  }
}

function scenarioRecords(
  name: string,
  seconds: number,
): { universe: ShardUniverse; records: CountRecord[] } {
  const run = runScenario(name, {
    seed: 7,
    startMs: Date.UTC(2026, 0, 1),
    durationMs: seconds * second,
  });
  return { universe: run.universe, records: [...run.records()] };
}

function sourceOf(records: readonly CountRecord[], batch: number): RecordSource {
  return {
    label: 'test records',
    live: false,
    open: () => Promise.resolve({ partitions: 1, backlogPartitions: [], judgedThrough: null }),
    async *batches() {
      for (let at = 0; at < records.length; at += batch) yield records.slice(at, at + batch);
    },
    close: () => Promise.resolve(),
    markJudgedUpTo() {},
    backlogged: () => false,
  };
}

/** Feeds a scenario through a pipeline; the event stream as text, one line per event. */
async function eventStream(
  scenario: string,
  seconds: number,
  later: boolean,
  windowMs = 10 * second,
  hopMs = windowMs,
): Promise<{ lines: string[]; judge: LaterJudge | null }> {
  const { universe, records } = scenarioRecords(scenario, seconds);
  const settings = { ...defaultJudgeSettings, null: 'map' as const, hopMs };
  const inner = new Judge(universe, settings);
  const judge = later ? new LaterJudge(inner) : null;
  const keys = new KeyAnalysis(universe, {
    windowMs,
    hopMs,
    sketch: { counters: 16, registers: 4096 },
    simulations: 200,
    alpha: settings.alpha,
    null: 'map',
    maxFlagged: settings.maxFlagged,
  });
  const pipeline = new JudgingPipeline(
    universe,
    { windowMs, hopMs, latenessMs: 2 * second },
    judge ?? inner,
    () => 0,
    { keys },
  );
  const lines: string[] = [];
  pipeline.events.on('window closed', (window) => lines.push(`closed ${window.start}`));
  pipeline.events.on('window judged', ({ judgement }) => lines.push(JSON.stringify(judgement)));
  pipeline.events.on('incident opened', (incident) => lines.push(`opened ${incident.shard}`));
  pipeline.events.on('incident cleared', (incident) => lines.push(`cleared ${incident.shard}`));
  const source = sourceOf(records, 500);
  await feedRecords(source, await source.open(), pipeline);
  pipeline.finish();
  await pipeline.settled();
  return { lines, judge };
}

/** The verdict lines only (closed events interleave differently when verdicts come later). */
const verdictsOf = (lines: string[]) => lines.filter((line) => !line.startsWith('closed '));

describe('JudgingPipeline with a judge on another thread', () => {
  it('announces the same verdicts, incidents and key verdicts in the same order (hot key, shard map)', async () => {
    const here = await eventStream('hot-key', 400, false);
    const there = await eventStream('hot-key', 400, true);
    expect(verdictsOf(here.lines).length).toBeGreaterThan(35);
    // The scenario's planted hot key opens an incident and the key verdict names its cause.
    expect(here.lines.some((line) => line.startsWith('opened '))).toBe(true);
    expect(here.lines.some((line) => line.includes('"cause"'))).toBe(true);
    expect(verdictsOf(there.lines)).toEqual(verdictsOf(here.lines));
    expect(there.lines.filter((line) => line.startsWith('closed '))).toEqual(
      here.lines.filter((line) => line.startsWith('closed ')),
    );
  });

  it('gives the same stream on sliding windows of a weighted cluster', async () => {
    const here = await eventStream('weighted', 600, false, 30 * second, 10 * second);
    const there = await eventStream('weighted', 600, true, 30 * second, 10 * second);
    expect(verdictsOf(there.lines)).toEqual(verdictsOf(here.lines));
  });

  it('holds reading back once the backlog of windows is full', async () => {
    const { judge } = await eventStream('chance', 64 * 10 * 3, true);
    // 3 * 64 windows close in one batch-sized burst: the feed waits for room.
    expect(judge!.mostInFlight).toBeGreaterThan(1);
    expect(judge!.mostInFlight).toBeLessThanOrEqual(maxPendingWindows);
  });

  it('fails the run with the judging error, and publishes nothing after it', async () => {
    const { universe, records } = scenarioRecords('chance', 600);
    const settings = { ...defaultJudgeSettings, hopMs: 10 * second };
    let judged = 0;
    const failAt = records[0].ts - (records[0].ts % (10 * second)) + 200 * second;
    const judge = new LaterJudge(new Judge(universe, settings), (window) => window.start >= failAt);
    const pipeline = new JudgingPipeline(
      universe,
      { windowMs: 10 * second, latenessMs: 2 * second },
      judge,
      () => 0,
    );
    pipeline.events.on('window judged', () => judged++);
    const source = sourceOf(records, 100);
    // Where the error surfaces depends on when the reading thread next waits: the feed, the
    // close of the last windows, or the wait for the last verdicts; never later than that.
    const failure = await (async () => {
      await feedRecords(source, await source.open(), pipeline);
      pipeline.finish();
      await pipeline.settled();
    })().then(
      () => null,
      (error: Error) => error.message,
    );
    expect(failure).toBe('worker out of memory');
    expect(judged).toBe(20);
    expect(() => pipeline.record(failAt + 900 * second, universe.idAt(0), 1)).toThrow(
      'worker out of memory',
    );
    await expect(pipeline.settled()).rejects.toThrow('worker out of memory');
  });
});
