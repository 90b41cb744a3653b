import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { PipelineEvents } from '../../src/judge/pipeline-events.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

const second = 1000;
// 2025-12-01T00:00:00Z, a multiple of 10 s.
const base = Date.UTC(2025, 11, 1);

function pipelineWith(clock: () => number) {
  const universe = ShardUniverse.fromIds(['a', 'b']);
  const judge = new Judge(universe, {
    ...defaultJudgeSettings,
    confirm: 1,
    clear: 1,
    hopMs: 10 * second,
  });
  const pipeline = new JudgingPipeline(
    universe,
    { windowMs: 10 * second, latenessMs: 2 * second },
    judge,
    clock,
  );
  const seen: string[] = [];
  pipeline.events.on('window closed', (window) =>
    seen.push(`closed ${(window.start - base) / second}`),
  );
  pipeline.events.on('window judged', ({ judgement }) =>
    seen.push(`judged ${judgement.findings.join('+')}`),
  );
  pipeline.events.on('incident opened', (incident) => seen.push(`opened ${incident.shard}`));
  pipeline.events.on('incident cleared', (incident) => seen.push(`cleared ${incident.shard}`));
  pipeline.events.on('record rejected', ({ reason, line }) =>
    seen.push(`rejected ${reason} ${line}`),
  );
  pipeline.events.on('source stalled', ({ quietMs }) => seen.push(`stalled ${quietMs}`));
  return { pipeline, seen };
}

describe('PipelineEvents', () => {
  it('calls listeners in order and stops calling one that unsubscribed', () => {
    const events = new PipelineEvents();
    const calls: string[] = [];
    const off = events.on('source stalled', () => calls.push('first'));
    events.on('source stalled', () => calls.push('second'));
    expect(events.listens('source stalled')).toBe(true);
    expect(events.listens('window closed')).toBe(false);
    events.emit('source stalled', { quietMs: 1, newestRecordTs: 0 });
    off();
    events.emit('source stalled', { quietMs: 2, newestRecordTs: 0 });
    expect(calls).toEqual(['first', 'second', 'second']);
  });
});

describe('JudgingPipeline', () => {
  it('announces closed and judged windows, incidents and rejections in order', () => {
    const { pipeline, seen } = pipelineWith(() => 0);
    // A dead shard b in the first window (2 shards: too few for auto to turn robust).
    pipeline.record(base + 1 * second, 'a', 1000);
    pipeline.reject('not JSON', 3);
    pipeline.record(base + 11 * second, 'a', 1000);
    pipeline.record(base + 11 * second, 'b', 1000);
    pipeline.finish();
    expect(seen).toEqual([
      'rejected not JSON 3',
      'closed 0',
      // All of b's share on a: a failover on two shards.
      'judged hotspot+cold',
      'opened a',
      'opened b',
      'closed 10',
      'judged chance',
      'cleared a',
      'cleared b',
    ]);
    expect(pipeline.totals).toMatchObject({
      recordsSeen: 3,
      load: 3000,
      rejected: { 'not JSON': 1 },
    });
  });

  it('closes a live source windows on the wall clock once it is quiet, and says it stalled once', () => {
    let now = 0;
    const { pipeline, seen } = pipelineWith(() => now);
    pipeline.record(base + 3 * second, 'a', 10);
    pipeline.record(base + 3 * second, 'b', 10);
    now = 100 * second;
    pipeline.tick();
    expect(seen).toEqual([]);
    // Event time is taken to run on with the wall clock from the last tick with records:
    // newest 3 s + quiet 9 s = 12 s reaches window [0, 10) plus 2 s of lateness.
    now += 8 * second;
    pipeline.tick();
    expect(seen).toEqual([]);
    now += 1 * second;
    pipeline.tick();
    expect(seen).toEqual(['closed 0', 'judged chance']);
    now += 10 * second;
    pipeline.tick();
    pipeline.tick();
    expect(seen).toEqual([
      'closed 0',
      'judged chance',
      'stalled 19000',
      'closed 10',
      'judged too little traffic',
    ]);
  });
});

describe('bounded clocks and source partitions', () => {
  function pipelineOf(clock: () => number, options: { live?: boolean; maxAheadMs?: number }) {
    const universe = ShardUniverse.fromIds(['a', 'b']);
    const judge = new Judge(universe, { ...defaultJudgeSettings, hopMs: 10 * second });
    const pipeline = new JudgingPipeline(
      universe,
      { windowMs: 10 * second, latenessMs: 0 },
      judge,
      clock,
      options,
    );
    const judged: Judgement[] = [];
    pipeline.events.on('window judged', ({ judgement }) => judged.push(judgement));
    return { pipeline, judged };
  }

  it('rejects one record stamped in the year 2976 in a replay and judges the rest (measured on main: 632 of 800 later records were late, 3e9 windows skipped)', () => {
    const { pipeline, judged } = pipelineOf(() => 0, {});
    for (let window = 0; window < 100; window++) {
      if (window === 20) pipeline.record(Date.UTC(2976, 0, 1), 'a', 1);
      for (let at = 0; at < 8; at++) {
        pipeline.record(base + window * 10 * second + at * second, at % 2 === 0 ? 'a' : 'b', 1);
      }
    }
    pipeline.finish();
    expect(judged).toHaveLength(100);
    expect(judged.every((judgement) => judgement.requests === 8)).toBe(true);
    expect(pipeline.totals.rejected).toEqual({ 'too far ahead': 1 });
    expect(pipeline.totals.lateRecords).toBe(0);
    expect(pipeline.totals.quietWindowsSkipped).toBe(0);
  });

  it('rejects a future record at the end of a replay rather than jumping to it', () => {
    const { pipeline, judged } = pipelineOf(() => 0, {});
    pipeline.record(base, 'a', 1);
    pipeline.record(Date.UTC(2976, 0, 1), 'b', 1);
    pipeline.finish();
    expect(judged).toHaveLength(1);
    expect(pipeline.totals.rejected).toEqual({ 'too far ahead': 1 });
  });

  it('confirms a real pause in a replay and reports it as one gap with its span', () => {
    const { pipeline, judged } = pipelineOf(() => 0, {});
    pipeline.record(base, 'a', 1);
    // Traffic resumes three days later, a record a second: held until the held records
    // span a window (10 s), then counted, nothing lost.
    const resumed = base + 3 * 86_400 * second;
    for (let at = 0; at < 30; at++) pipeline.record(resumed + at * second, 'b', 1);
    pipeline.finish();
    expect(pipeline.totals.rejected).toEqual({});
    expect(judged.reduce((sum, judgement) => sum + judgement.requests, 0)).toBe(31);
    expect(judged).toHaveLength(4);
    // Worked by hand: the gap runs from the end of window 0 to the start of the window at
    // three days, 3 x 8640 - 1 windows of 10 s.
    expect(judged[1].gapBefore).toEqual({
      start: new Date(base + 10 * second).toISOString(),
      end: new Date(resumed).toISOString(),
      windows: 3 * 8640 - 1,
    });
    expect(judged[1].notes.some((note) => note.includes('2 d 23 h'))).toBe(true);
    expect(judged[0].gapBefore).toBeUndefined();
  });

  it('rejects records stamped more than the bound ahead of the wall clock on a live source', () => {
    let now = base;
    const { pipeline } = pipelineOf(() => now, { live: true, maxAheadMs: 60 * second });
    pipeline.record(base + 59 * second, 'a', 1);
    pipeline.record(base + 61 * second, 'a', 1);
    pipeline.record(Date.UTC(2976, 0, 1), 'a', 1);
    expect(pipeline.totals.rejected).toEqual({ 'too far ahead': 2 });
    // The bound moves with the wall clock at each tick.
    now += 10 * second;
    pipeline.tick();
    pipeline.record(base + 61 * second, 'a', 1);
    expect(pipeline.totals.rejected).toEqual({ 'too far ahead': 2 });
  });

  it('stops waiting for a quiet live partition and says so in the verdict', () => {
    let now = base;
    const { pipeline, judged } = pipelineOf(() => now, { live: true });
    pipeline.expectPartition(0);
    pipeline.expectPartition(1);
    pipeline.record(base + 1 * second, 'a', 1, undefined, 1);
    for (let at = 0; at < 25; at++) {
      now = base + at * second;
      pipeline.record(base + at * second, 'a', 1, undefined, 0);
      pipeline.tick();
    }
    // Partition 1 stopped at 1 s; it is idle once quiet for window + lateness (10 s), and
    // partition 0 alone closes windows 0 and 10 s.
    expect(judged.map((judgement) => judgement.window.start)).toEqual([
      new Date(base).toISOString(),
      new Date(base + 10 * second).toISOString(),
    ]);
    expect(judged[0].idlePartitions).toEqual([1]);
    expect(judged[0].notes).toContain(
      'source partition 1 idle (no records for 10 s or more): not holding windows back',
    );
    expect(pipeline.totals.lateRecords).toBe(0);
  });
});
