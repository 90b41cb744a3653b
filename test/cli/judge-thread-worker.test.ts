// The judging thread's entry, started directly as a worker through tsx
// (ts-worker-entry.mjs), as JudgeThread starts the built one. Source of truth: the Judge
// on this thread over the same declared universe (itself checked against published values
// in test/judge/golden.test.ts); the entry must answer each posted window with that
// verdict, in order, and an error text instead of dying on a window it cannot judge.
import { Worker } from 'node:worker_threads';
import { afterAll, describe, expect, it } from 'vitest';
import type { JudgeThreadReply } from '../../src/cli/judge-thread.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

const settings = { ...defaultJudgeSettings, hopMs: 10_000 };
const universe = ShardUniverse.fromIds(['s-1', 's-2', 's-3', 's-4']);
const worker = new Worker(new URL('./ts-worker-entry.mjs', import.meta.url), {
  argv: [new URL('../../src/cli/judge-thread-worker.ts', import.meta.url).href],
  workerData: { universe: universe.describe(), settings },
});
const replies: JudgeThreadReply[] = [];
const waiting: (() => void)[] = [];
worker.on('message', (reply: JudgeThreadReply) => {
  replies.push(reply);
  waiting.shift()?.();
});

function ask(window: ClosedWindow): Promise<JudgeThreadReply> {
  return new Promise((resolve) => {
    const at = replies.length;
    waiting.push(() => resolve(replies[at]));
    worker.postMessage(window);
  });
}

function window(at: number, counts: number[]): ClosedWindow {
  const start = at * 10_000;
  return {
    start,
    end: start + 10_000,
    counts: Float64Array.from(counts),
    total: counts.reduce((sum, n) => sum + n, 0),
    late: 0,
    rejected: {},
  };
}

afterAll(async () => {
  await worker.terminate();
});

describe('judge-thread-worker', () => {
  it('answers each window with the verdict of the Judge on this thread, in order', async () => {
    const here = new Judge(universe, settings);
    const windows = [
      window(0, [250, 250, 250, 250]),
      window(1, [200, 200, 200, 800]),
      window(2, [260, 240, 255, 245]),
    ];
    for (const closed of windows) {
      const reply = await ask(closed);
      expect(reply).toEqual({ judgement: here.judge(closed) });
    }
  });

  it('answers an error text for a window it cannot judge, and goes on', async () => {
    // A window without counts (nothing the reading thread posts) makes the Judge throw.
    const broken = { ...window(3, [1, 1, 1, 1]), counts: undefined } as unknown as ClosedWindow;
    expect(await ask(broken)).toEqual({
      error: "Cannot read properties of undefined (reading 'length')",
    });
    const next = await ask(window(4, [250, 250, 250, 250]));
    expect('judgement' in next).toBe(true);
  });
});
