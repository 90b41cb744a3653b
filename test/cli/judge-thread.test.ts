// The judge on a worker thread (src/cli/judge-thread.ts) against the Judge on this thread:
// the same class over a copy of the declared universe must give the same verdicts, window
// for window (the reference: the on-thread Judge, checked against published values in
// test/judge/golden.test.ts and test/chance/). The worker runs the TypeScript entry through
// tsx (ts-worker-entry.mjs), as the built CLI runs dist/cli/judge-thread-worker.js.
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ringWeights } from '../../bench/ring-weights.js';
import { JudgeThread, builtJudgeThreadEntry } from '../../src/cli/judge-thread.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { RandomDraws } from '../../src/scenario/random-draws.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import { EventTimeWindows, type ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

const entry = {
  url: new URL('./ts-worker-entry.mjs', import.meta.url),
  argv: [new URL('../../src/cli/judge-thread-worker.ts', import.meta.url).href],
};

function windowsOf(scenario: string, seconds: number, universe?: ShardUniverse) {
  const run = runScenario(scenario, {
    seed: 3,
    startMs: Date.UTC(2026, 2, 1),
    durationMs: seconds * 1000,
  });
  const windows: ClosedWindow[] = [];
  const counted = universe ?? run.universe;
  const events = new EventTimeWindows(counted, { windowMs: 10_000, latenessMs: 0 }, (window) =>
    windows.push(window),
  );
  for (const record of run.records()) events.add(record.ts, record.shard, record.count);
  events.closeAll();
  return { universe: run.universe, windows };
}

describe('JudgeThread', () => {
  it('gives the verdicts of the Judge on this thread, in order (weighted shard map, hotspot)', async () => {
    for (const scenario of ['weighted', 'hotspot']) {
      const { universe, windows } = windowsOf(scenario, 600);
      const settings = { ...defaultJudgeSettings, null: 'map' as const, hopMs: 10_000 };
      const here = new Judge(universe, settings);
      const thread = new JudgeThread(universe.describe()!, settings, entry);
      try {
        // All posted at once, as a reader ahead of the judge does: answers come in order.
        const there = await Promise.all(windows.map((window) => thread.judge(window)));
        const expected = windows.map((window) => here.judge(window));
        expect(there.length).toBe(60);
        expect(JSON.stringify(there)).toBe(JSON.stringify(expected));
        if (scenario === 'hotspot') {
          expect(expected.some((verdict) => verdict.findings.includes('hotspot'))).toBe(true);
        }
      } finally {
        await thread.close();
      }
    }
  });

  it('warms up before the first window of a large weighted universe, and still agrees', async () => {
    // Hash-range weights of a ring with 4 tokens a shard (demo data), 5000 shards: past the
    // warm-up's 4000, so the thread judges its made-up windows first.
    const draws = new RandomDraws(11);
    const ids = Array.from({ length: 5000 }, (_, shard) => `r-${shard}`);
    const weights = [...ringWeights(5000, draws, 4)];
    const universe = ShardUniverse.fromWeights(ids, weights);
    const settings = { ...defaultJudgeSettings, null: 'map' as const, hopMs: 10_000 };
    const windows = [20, 2000].map((perShard, at) => {
      const counts = new Float64Array(5000);
      let total = 0;
      universe.shares.forEach((share, shard) => {
        counts[shard] = draws.poisson(perShard * 5000 * share * (shard === 7 ? 2 : 1));
        total += counts[shard];
      });
      return { start: at * 10_000, end: (at + 1) * 10_000, counts, total, late: 0, rejected: {} };
    });
    const thread = new JudgeThread(universe.describe()!, settings, entry);
    try {
      const here = new Judge(universe, settings);
      for (const window of windows) {
        expect(JSON.stringify(await thread.judge(window))).toBe(JSON.stringify(here.judge(window)));
      }
      // Twice its share on shard r-7 is found at 2000 requests a shard.
      expect(here.judge(windows[1]).findings).toContain('hotspot');
    } finally {
      await thread.close();
    }
  });

  it('follows a numbered universe that grew (a topic gained partitions)', async () => {
    const universe = ShardUniverse.ofCount(4);
    const settings = { ...defaultJudgeSettings, hopMs: 10_000 };
    const thread = new JudgeThread(universe.describe()!, settings, entry);
    const here = new Judge(ShardUniverse.ofCount(4), settings);
    try {
      const small = {
        start: 0,
        end: 10_000,
        counts: Float64Array.of(90, 110, 100, 100),
        total: 400,
        late: 0,
        rejected: {},
      };
      const grown = {
        start: 10_000,
        end: 20_000,
        counts: Float64Array.of(90, 110, 100, 100, 400, 0),
        total: 800,
        late: 0,
        rejected: {},
      };
      const first = await thread.judge(small);
      const second = await thread.judge(grown);
      expect(first).toEqual(here.judge(small));
      expect(second.shards).toBe(6);
      expect(second.fullest?.shard).toBe('4');
      expect(second.emptiest?.shard).toBe('5');
    } finally {
      await thread.close();
    }
  });

  it('refuses verdicts once closed, and names the failure of a worker that cannot start', async () => {
    const universe = ShardUniverse.ofCount(2);
    const settings = { ...defaultJudgeSettings, hopMs: 10_000 };
    const broken = new JudgeThread(universe.describe()!, settings, {
      url: new URL('./no-such-worker.js', import.meta.url),
    });
    const window = {
      start: 0,
      end: 10_000,
      counts: Float64Array.of(5, 5),
      total: 10,
      late: 0,
      rejected: {},
    };
    await expect(broken.judge(window)).rejects.toThrow(
      /^the judging thread failed: .*(no-such-worker|Cannot find module).* \(--judge-inline judges on the reading thread\)$/s,
    );
    await broken.close();
    const thread = new JudgeThread(universe.describe()!, settings, entry);
    await thread.close();
    await expect(thread.judge(window)).rejects.toThrow('judging thread closed');
  });

  it('is not offered from the TypeScript sources, where no built worker exists', () => {
    // Running under vitest, this module is src/cli/judge-thread.ts: no .js entry beside it.
    expect(fileURLToPath(new URL('../../src/cli/judge-thread.ts', import.meta.url))).toMatch(
      /\.ts$/,
    );
    expect(builtJudgeThreadEntry()).toBeNull();
  });
});
