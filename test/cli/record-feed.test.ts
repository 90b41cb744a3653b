import { describe, expect, it } from 'vitest';
import { feedRecords } from '../../src/cli/record-feed.js';
import type { SourceItem } from '../../src/ingest/file-source.js';
import type { RecordSource, SourceStart } from '../../src/ingest/record-source.js';
import type { RejectionReason } from '../../src/window/count-record.js';
import type { FeedSink } from '../../src/window/feed-sink.js';

// Source of truth: the contract in the doc comment of feedRecords (src/cli/record-feed.ts)
// and of FeedSink (src/window/feed-sink.ts); the batches are literals of our own and the
// expected calls follow them one for one.

const start: SourceStart = { partitions: 1, backlogPartitions: [], judgedThrough: null };

/** A source handing out the given batches, counting how many were taken. */
function fakeSource(batches: SourceItem[][], backlogged: (p: number) => boolean = () => false) {
  const taken = { batches: 0 };
  const source: RecordSource = {
    label: 'fake',
    live: false,
    open: () => Promise.resolve(start),
    async *batches() {
      for (const batch of batches) {
        taken.batches++;
        yield batch;
      }
    },
    close: () => Promise.resolve(),
    markJudgedUpTo() {},
    backlogged,
  };
  return { source, taken };
}

type Call =
  | ['record', number, string, number, string | undefined, number, number | undefined]
  | ['reject', RejectionReason, number | undefined, number | undefined, number | undefined]
  | ['expect', number];

/** A sink writing down every call; `room` as given. */
function fakeSink(room?: () => Promise<void> | undefined) {
  const calls: Call[] = [];
  let probe: ((partition: number) => boolean) | undefined;
  const sink: FeedSink = {
    record: (ts, shard, count, key, partition, offset) =>
      calls.push(['record', ts, shard, count, key, partition, offset]),
    reject: (reason, line, partition, offset) =>
      calls.push(['reject', reason, line, partition, offset]),
    setBacklogProbe: (backlogged) => {
      probe = backlogged;
    },
    expectPartition: (partition) => calls.push(['expect', partition]),
    ...(room === undefined ? {} : { room }),
  };
  return { sink, calls, probe: () => probe };
}

describe('feedRecords', () => {
  it('hands every record and rejection to the sink in source order, with line, partition and offset', async () => {
    const { source } = fakeSource([
      [
        { ts: 5, shard: 'a', count: 2 },
        { reason: 'not JSON', line: 2 },
        { ts: 6, shard: 'b', count: 1, key: 'user-9', partition: 3, offset: 41 },
      ],
      [{ reason: 'too late', partition: 1, offset: 7 }],
    ]);
    const { sink, calls } = fakeSink();
    await feedRecords(source, start, sink);
    expect(calls).toEqual([
      ['record', 5, 'a', 2, undefined, 0, undefined],
      ['reject', 'not JSON', 2, undefined, undefined],
      ['record', 6, 'b', 1, 'user-9', 3, 41],
      ['reject', 'too late', undefined, 1, 7],
    ]);
  });

  it('announces backlog partitions first and gives the sink the source backlog probe', async () => {
    const { source } = fakeSource([[{ ts: 1, shard: 'a', count: 1 }]], (p) => p === 4);
    const { sink, calls, probe } = fakeSink();
    await feedRecords(source, { ...start, partitions: 6, backlogPartitions: [4, 1] }, sink);
    expect(calls.slice(0, 2)).toEqual([
      ['expect', 4],
      ['expect', 1],
    ]);
    expect(probe()?.(4)).toBe(true);
    expect(probe()?.(1)).toBe(false);
  });

  it('leaves out records `keep` refuses but never rejections', async () => {
    const { source } = fakeSource([
      [
        { ts: 10, shard: 'a', count: 1 },
        { ts: 20, shard: 'a', count: 1 },
        { reason: 'bad timestamp', line: 3 },
        { ts: 30, shard: 'a', count: 1 },
      ],
    ]);
    const { sink, calls } = fakeSink();
    await feedRecords(source, start, sink, { keep: (r) => r.ts >= 20 });
    expect(calls).toEqual([
      ['record', 20, 'a', 1, undefined, 0, undefined],
      ['reject', 'bad timestamp', 3, undefined, undefined],
      ['record', 30, 'a', 1, undefined, 0, undefined],
    ]);
  });

  it('stops after the batch in which `stopped` turns true, the batch counted whole', async () => {
    const { source, taken } = fakeSource([
      [{ ts: 1, shard: 'a', count: 1 }],
      [
        { ts: 2, shard: 'a', count: 1 },
        { ts: 3, shard: 'a', count: 1 },
      ],
      [{ ts: 4, shard: 'a', count: 1 }],
    ]);
    const { sink, calls } = fakeSink();
    const afterBatch: number[] = [];
    await feedRecords(source, start, sink, {
      afterBatch: (batch) => {
        afterBatch.push(batch.length);
      },
      stopped: () => afterBatch.length === 2,
    });
    expect(calls.map((c) => c[1])).toEqual([1, 2, 3]);
    expect(afterBatch).toEqual([1, 2]);
    expect(taken.batches).toBe(2);
  });

  it('awaits the sink room after each batch and every 1024 records before counting more', async () => {
    const batch: SourceItem[] = Array.from({ length: 2048 }, (_, i) => ({
      ts: i,
      shard: 's',
      count: 1,
    }));
    const { source } = fakeSource([batch, [{ ts: 9999, shard: 's', count: 1 }]]);
    const waits: { before: number; release: () => void }[] = [];
    let counted = 0;
    const { sink } = fakeSink(() => {
      // Full at records 1024 and 2048 (within the first batch), then after that batch
      // (2048 again) and after the second (2049).
      return new Promise<void>((resolve) => waits.push({ before: counted, release: resolve }));
    });
    const record = sink.record.bind(sink);
    sink.record = (...args) => {
      counted++;
      record(...args);
    };
    const done = feedRecords(source, start, sink);
    const releaseNext = async (expectedCounted: number) => {
      await new Promise((resolve) => setTimeout(resolve, 5));
      expect(counted).toBe(expectedCounted);
      const wait = waits.shift();
      expect(wait?.before).toBe(expectedCounted);
      wait?.release();
    };
    await releaseNext(1024);
    await releaseNext(2048);
    await releaseNext(2048);
    await releaseNext(2049);
    await done;
    expect(waits).toEqual([]);
  });
});
