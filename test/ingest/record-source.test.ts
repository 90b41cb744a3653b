import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import type { SourceItem } from '../../src/ingest/file-source.js';
import {
  fileRecordSource,
  kafkaGroupRecordSource,
  kafkaRecordSource,
  scenarioRecordSource,
  type RecordSource,
} from '../../src/ingest/record-source.js';
import type { CountRecord } from '../../src/window/count-record.js';

// Source of truth: the record formats of docs/formats.md (a count report, a count batch)
// and the contract of RecordSource (src/ingest/record-source.ts); the lines below are
// literals and the items they must give are written out by hand.

const dir = mkdtempSync(join(tmpdir(), 'shardwise-record-source-'));

async function all(source: RecordSource): Promise<SourceItem[]> {
  const items: SourceItem[] = [];
  for await (const batch of source.batches()) items.push(...batch);
  return items;
}

const lines = [
  '{"ts": 1764576005000, "shard": "cart-5", "count": 799}',
  '{"ts": 1764576005000, "counts": {"cart-0": 507, "cart-5": 2}}',
  'not json',
  '',
  '{"ts": 1764576006000, "shard": "cart-1", "count": -1}',
].join('\n');

describe('fileRecordSource', () => {
  it('reads a file as a replay of one partition, rejections with their lines', async () => {
    const path = join(dir, 'carts.jsonl');
    writeFileSync(path, `${lines}\n`);
    const source = fileRecordSource(path);
    expect(source.label).toBe(`file ${path}`);
    expect(source.live).toBe(false);
    expect(await source.open()).toEqual({
      partitions: 1,
      backlogPartitions: [],
      judgedThrough: null,
    });
    expect(await all(source)).toEqual([
      { ts: 1764576005000, shard: 'cart-5', count: 799 },
      { ts: 1764576005000, shard: 'cart-0', count: 507 },
      { ts: 1764576005000, shard: 'cart-5', count: 2 },
      { reason: 'not JSON', line: 3 },
      { reason: 'negative count', line: 5 },
    ]);
    expect(source.backlogged(0)).toBe(false);
    source.markJudgedUpTo(1764576010000);
    await source.close();
  });

  it('reads standard input for - as a live source', async () => {
    const stdin = new PassThrough();
    const source = fileRecordSource('-', stdin);
    expect(source.label).toBe('standard input');
    expect(source.live).toBe(true);
    stdin.end('{"ts": 5, "shard": "a", "count": 1}\n');
    expect(await all(source)).toEqual([{ ts: 5, shard: 'a', count: 1 }]);
  });
});

describe('scenarioRecordSource', () => {
  const records: CountRecord[] = [
    { ts: 0, shard: 'a', count: 2 },
    { ts: 0, shard: 'b', count: 1 },
    { ts: 1000, shard: 'a', count: 4 },
  ];
  const run = { startMs: 0, endMs: 2000, tickMs: 1000, records: () => records };

  it('replays a run as fast as drawn, all its records in order', async () => {
    const source = scenarioRecordSource(run, 'fast', 'scenario flash-sale');
    expect(source.label).toBe('scenario flash-sale');
    expect(source.live).toBe(false);
    expect((await source.open()).partitions).toBe(1);
    expect(await all(source)).toEqual(records);
  });

  it('is live when paced in real time', async () => {
    const source = scenarioRecordSource(run, 'real-time', 'scenario flash-sale');
    expect(source.live).toBe(true);
    await source.close();
  });
});

// Built without connecting (port 9 on loopback has no listener; nothing is read here).
describe('Kafka record sources', () => {
  it('a topic read for watch is live unless it stops at an end, and is judged as a whole', () => {
    const options = { brokers: ['127.0.0.1:9'], topic: 'seats', windows: { windowMs: 10_000 } };
    const live = kafkaRecordSource(options);
    expect([live.label, live.live]).toEqual(['topic seats', true]);
    expect(kafkaRecordSource({ ...options, stopAtEnd: true }).live).toBe(false);
    expect(kafkaRecordSource({ ...options, untilMs: 5 }).live).toBe(false);
    expect(() => live.markJudgedUpTo(10_000, 1)).toThrow(
      'topic seats: this source keeps one judged end for all partitions',
    );
  });

  it("count's share of a group is live and judged partition by partition", () => {
    const group = kafkaGroupRecordSource({
      brokers: ['127.0.0.1:9'],
      topic: 'seats',
      groupId: 'counters',
      from: 'earliest',
      shardFrom: { kind: 'field' },
      windowMs: 10_000,
    } as Parameters<typeof kafkaGroupRecordSource>[0]);
    expect([group.label, group.live]).toEqual(['topic seats', true]);
    expect(() => group.markJudgedUpTo(10_000)).toThrow(
      'topic seats: this source is judged partition by partition',
    );
  });
});
