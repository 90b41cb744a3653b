import { describe, expect, it } from 'vitest';
import { ScenarioSource, type TickedRecords } from '../../src/ingest/scenario-source.js';
import type { CountRecord } from '../../src/window/count-record.js';

const start = Date.UTC(2025, 11, 1, 10);

/** Three ticks of one second: two records in the first, one in the last. */
const ticked: TickedRecords = {
  startMs: start,
  endMs: start + 3000,
  tickMs: 1000,
  *records(): Generator<CountRecord> {
    yield { ts: start, shard: 'a', count: 1 };
    yield { ts: start + 400, shard: 'b', count: 2 };
    yield { ts: start + 2000, shard: 'a', count: 3 };
  },
};

function fakeClock() {
  const clock = { now: start, sleeps: [] as number[] };
  return {
    clock,
    now: () => clock.now,
    sleep: async (ms: number) => {
      clock.sleeps.push(ms);
      clock.now += ms;
    },
  };
}

describe('ScenarioSource', () => {
  it('releases each tick at its end in real time', async () => {
    const { clock, now, sleep } = fakeClock();
    const source = new ScenarioSource(ticked, { pace: 'real-time', now, sleep });
    const released: [number, number][] = [];
    for await (const batch of source.batches()) released.push([clock.now - start, batch.length]);
    // Tick [0, 1 s) is due at 1 s, tick [2 s, 3 s) at 3 s; the empty middle tick sends nothing.
    expect(released).toEqual([
      [1000, 2],
      [3000, 1],
    ]);
    expect(clock.sleeps).toEqual([1000, 2000]);
  });

  it('yields everything at once when fast, item by item too', async () => {
    const source = new ScenarioSource(ticked, { pace: 'fast' });
    const seen: unknown[] = [];
    for await (const item of source) seen.push(item);
    expect(seen).toEqual([...ticked.records()]);
  });

  it('stops waiting when closed', async () => {
    let aborted = false;
    const source = new ScenarioSource(ticked, {
      pace: 'real-time',
      now: () => start,
      sleep: (_ms, signal) =>
        new Promise<void>((resolve) => {
          signal.addEventListener('abort', () => {
            aborted = true;
            resolve();
          });
        }),
    });
    const iterator = source.batches();
    const pending = iterator.next();
    await source.close();
    expect(await pending).toEqual({ value: undefined, done: true });
    expect(aborted).toBe(true);
  });
});

describe('ScenarioSource fast replay and the event loop', () => {
  it('gives the event loop a turn between blocks, so timers and sockets are served', async () => {
    // 20 000 records: five blocks of 4096. A replay that only awaits microtasks would read
    // them all before a setImmediate callback (a /metrics request, a key) ran once.
    const many: TickedRecords = {
      startMs: start,
      endMs: start + 20_000,
      tickMs: 1000,
      *records(): Generator<CountRecord> {
        for (let i = 0; i < 20_000; i++) yield { ts: start + i, shard: 'a', count: 1 };
      },
    };
    const source = new ScenarioSource(many, { pace: 'fast' });
    let turns = 0;
    const timeline: string[] = [];
    const tick = () => {
      turns++;
      timeline.push('turn');
      if (turns < 10) setImmediate(tick);
    };
    setImmediate(tick);
    for await (const batch of source.batches()) timeline.push(`batch ${batch.length}`);
    expect(timeline.filter((entry) => entry.startsWith('batch'))).toHaveLength(5);
    // A turn ran between the first block and the last.
    const first = timeline.indexOf('batch 4096');
    const last = timeline.lastIndexOf('batch 4096');
    expect(timeline.slice(first, last)).toContain('turn');
  });
});
