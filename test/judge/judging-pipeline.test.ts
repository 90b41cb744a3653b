import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
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
