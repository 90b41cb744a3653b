import type { EachBatchPayload, Kafka } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import { UsageError } from '../../../src/errors/usage-error.js';
import { KafkaIngestError } from '../../../src/ingest/kafka/errors.js';
import { KafkaGroupSource, type GroupSourceEvent } from '../../../src/ingest/kafka/group-source.js';
import type { SourceItem } from '../../../src/ingest/file-source.js';

// `count`'s share of a group without a broker: the client is a fake of the kafkajs 2.2.4
// calls made (kafkajs docs, "Consuming Messages": on(GROUP_JOIN | CRASH), run({ eachBatch })
// with batch.partition, messages, highWatermark and lastOffset(), commitOffsets with
// metadata; "Admin Client": fetchTopicMetadata, fetchOffsets with "-1" for none). The
// expected items, starts and commits follow the doc comment of KafkaGroupSource, by hand:
// a record at ts t is in the 10 s window ending floor(t / 10 s) * 10 s + 10 s.

const events = { GROUP_JOIN: 'consumer.group_join', CRASH: 'consumer.crash' };

function fakeGroup() {
  const seen: GroupSourceEvent[] = [];
  const commits: { partition: number; offset: string; metadata: string | null }[] = [];
  const handlers = new Map<string, (event: { payload: unknown }) => void>();
  const hook: { eachBatch: ((payload: EachBatchPayload) => Promise<void>) | null } = {
    eachBatch: null,
  };
  const source = new KafkaGroupSource({
    brokers: ['127.0.0.1:1'],
    topic: 'seats',
    groupId: 'counters',
    from: 'earliest',
    shardFrom: { kind: 'field' },
    windowMs: 10_000,
    onEvent: (event) => seen.push(event),
  });
  const kafka = {
    admin: () => ({
      connect: async () => {},
      disconnect: async () => {},
      fetchTopicMetadata: async () => ({
        topics: [{ name: 'seats', partitions: [{ partitionId: 0 }, { partitionId: 1 }] }],
      }),
      fetchOffsets: async () => [
        {
          topic: 'seats',
          partitions: [
            { partition: 0, offset: '-1', metadata: null },
            { partition: 1, offset: '5', metadata: 'shardwise judged-through=10000' },
          ],
        },
      ],
    }),
    consumer: () => ({
      events,
      on: (name: string, handler: (event: { payload: unknown }) => void) =>
        void handlers.set(name, handler),
      connect: async () => {},
      disconnect: async () => {},
      subscribe: async () => {},
      run: async (config: { eachBatch: (payload: EachBatchPayload) => Promise<void> }) => {
        hook.eachBatch = config.eachBatch;
      },
      commitOffsets: async (
        offsets: { partition: number; offset: string; metadata: string | null }[],
      ) => void commits.push(...offsets),
    }),
  } as unknown as Kafka;
  (source as unknown as { kafka: Kafka }).kafka = kafka;
  const batch = (partition: number, highWatermark: number, messages: [number, string][]) =>
    hook.eachBatch!({
      batch: {
        partition,
        highWatermark: String(highWatermark),
        lastOffset: () => String(messages[messages.length - 1][0]),
        messages: messages.map(([offset, value]) => ({
          offset: String(offset),
          value: Buffer.from(value),
          key: null,
          timestamp: '0',
        })),
      },
      heartbeat: async () => {},
    } as unknown as EachBatchPayload);
  const ready = async () => {
    while (hook.eachBatch === null) await new Promise((resolve) => setImmediate(resolve));
  };
  return { source, seen, commits, handlers, batch, ready };
}

describe('KafkaGroupSource', () => {
  it('refuses no brokers or a bad window, naming the option', () => {
    const options = {
      brokers: ['h:1'],
      topic: 't',
      groupId: 'g',
      from: 'earliest' as const,
      shardFrom: { kind: 'field' as const },
      windowMs: 10_000,
    };
    expect(() => new KafkaGroupSource({ ...options, brokers: [] })).toThrow(UsageError);
    expect(() => new KafkaGroupSource({ ...options, windowMs: 0 })).toThrow(
      '--window: "0ms" is not a whole number above zero',
    );
  });

  it('feeds batches one at a time, tagged with partition and offset, and commits per partition', async () => {
    const { source, seen, commits, handlers, batch, ready } = fakeGroup();
    expect(await source.connect()).toBe(2);
    const reader = source.batches();
    const first = reader.next();
    await ready();
    handlers.get(events.GROUP_JOIN)!({ payload: { memberAssignment: { seats: [1, 0] } } });
    const fed0 = batch(0, 10, [
      [3, '{"ts":1000,"shard":"a","count":2}'],
      [4, '{"ts":12000,"shard":"b","count":1}'],
    ]);
    const items0 = (await first).value as SourceItem[];
    expect(items0).toEqual([
      { ts: 1000, shard: 'a', count: 2, partition: 0, offset: 3 },
      { ts: 12000, shard: 'b', count: 1, partition: 0, offset: 4 },
    ]);
    expect(source.backlogged(0)).toBe(true);
    // Window 0..10 s published while the batch is being counted: commit what is safe now
    // (the batch is not yet processed: 3), and again once it is (offset 4 waits for 20 s).
    source.markJudgedUpTo(10_000, 0);
    const second = reader.next();
    await fed0;
    const fed1 = batch(1, 7, [
      [4, '{"ts":9000,"shard":"c","count":1}'], // below the group's commit: already counted
      [5, 'not json'],
      [6, '{"ts":15000,"shard":"c","count":3}'],
    ]);
    expect((await second).value).toEqual([
      { reason: 'not JSON', partition: 1, offset: 5 },
      { ts: 15000, shard: 'c', count: 3, partition: 1, offset: 6 },
    ]);
    expect(source.backlogged(1)).toBe(false);
    expect(seen).toEqual([
      { type: 'joined', epoch: 1, partitions: [0, 1] },
      { type: 'partition-started', epoch: 1, partition: 0, offset: 3, judgedThrough: -Infinity },
      { type: 'partition-started', epoch: 1, partition: 1, offset: 5, judgedThrough: 10_000 },
    ]);
    // Not held in this join, or not newer than what was published: nothing to commit.
    source.markJudgedUpTo(30_000, 7);
    source.markJudgedUpTo(10_000, 1);
    await source.close();
    await fed1;
    expect((await reader.next()).done).toBe(true);
    expect(commits).toEqual([
      { topic: 'seats', partition: 0, offset: '3', metadata: 'shardwise judged-through=10000' },
      { topic: 'seats', partition: 0, offset: '4', metadata: 'shardwise judged-through=10000' },
    ]);
    expect(source.stats).toEqual({ messages: 2 });
  });

  it('ends the read with an error naming the topic when the consumer stops for good', async () => {
    const { source, handlers, ready } = fakeGroup();
    const reader = source.batches();
    const first = reader.next();
    await ready();
    handlers.get(events.CRASH)!({ payload: { restart: true, error: new Error('rebalancing') } });
    handlers.get(events.CRASH)!({
      payload: { restart: false, error: new Error('x', { cause: new Error('Broker went away') }) },
    });
    await expect(first).rejects.toThrow(KafkaIngestError);
    await source.close();
  });

  it('names the topic and the cause of a stop', async () => {
    const { source, handlers, ready } = fakeGroup();
    const reader = source.batches();
    const first = reader.next();
    await ready();
    handlers.get(events.CRASH)!({
      payload: { restart: false, error: new Error('Broker went away') },
    });
    await expect(first).rejects.toThrow(
      'the counting consumer of --topic seats stopped: Broker went away',
    );
  });
});
