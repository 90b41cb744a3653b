import type { Admin } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import type { SourceItem } from '../../../src/ingest/file-source.js';
import { KafkaOffsetsSource } from '../../../src/ingest/kafka/offsets-source.js';

// A fake of the kafkajs 2.2.4 admin's fetchTopicOffsets (per partition { partition,
// offset, high, low }, offsets as decimal strings: kafkajs docs, "Admin Client: Fetch
// topic offsets"), answering the scripted end offsets below in turn. Expected counts are
// the growth of each end offset between reads, by hand; timestamps the last millisecond of
// the hop (the doc comment of KafkaOffsetsSource).

const hopMs = 10;

function source(
  rounds: Record<number, number>[],
  onPartitions: (count: number) => void = () => {},
) {
  const log: string[] = [];
  let call = 0;
  const offsetsSource = new KafkaOffsetsSource({
    brokers: ['127.0.0.1:1'],
    topic: 'seats',
    hopMs,
    onPartitions,
  });
  const admin = {
    connect: async () => void log.push('connect'),
    disconnect: async () => void log.push('disconnect'),
    fetchTopicOffsets: async (topic: string) => {
      log.push(`offsets ${topic}`);
      const ends = rounds[Math.min(call++, rounds.length - 1)];
      return Object.entries(ends).map(([partition, high]) => ({
        partition: Number(partition),
        offset: String(high),
        high: String(high),
        low: '0',
      }));
    },
  } as unknown as Admin;
  (offsetsSource as unknown as { admin: Admin }).admin = admin;
  return { offsetsSource, log };
}

describe('KafkaOffsetsSource', () => {
  it('refuses a hop that is not a whole number above 0', () => {
    expect(() => new KafkaOffsetsSource({ brokers: ['h:1'], topic: 't', hopMs: 0 })).toThrow(
      'hop 0 ms is not a whole number above 0',
    );
  });

  it('turns end-offset growth into counts per partition, hop by hop', async () => {
    const grown: number[] = [];
    const { offsetsSource, log } = source(
      [
        { 0: 10, 1: 5 }, // at open
        { 0: 12, 1: 5 }, // first, partial hop: a baseline only
        { 0: 15, 1: 9 },
        { 0: 15, 1: 9 }, // no growth: a zero count moves event time
        { 0: 2, 1: 9, 2: 6 }, // partition 0 made again, partition 2 new
      ],
      (count) => grown.push(count),
    );
    expect(await offsetsSource.open()).toEqual({
      partitions: 2,
      backlogPartitions: [],
      judgedThrough: null,
    });
    const batches: SourceItem[][] = [];
    for await (const batch of offsetsSource.batches()) {
      batches.push(batch);
      if (batches.length === 3) break;
    }
    const stamps = batches.map((batch) => (batch[0] as { ts: number }).ts);
    for (const ts of stamps) expect(ts % hopMs).toBe(hopMs - 1);
    expect(stamps[1]).toBeGreaterThan(stamps[0]);
    expect(stamps[2]).toBeGreaterThan(stamps[1]);
    expect(batches).toEqual([
      [
        { ts: stamps[0], shard: '0', count: 3 },
        { ts: stamps[0], shard: '1', count: 4 },
      ],
      [{ ts: stamps[1], shard: '0', count: 0 }],
      [{ ts: stamps[2], shard: '2', count: 6 }],
    ]);
    expect(grown).toEqual([3]);
    expect(log.filter((line) => line === 'offsets seats')).toHaveLength(5);
    expect(log.at(-1)).toBe('disconnect');
    expect(offsetsSource.backlogged()).toBe(false);
  });

  it('names the topic and the brokers when the offsets cannot be read', async () => {
    const { offsetsSource } = source([]);
    (offsetsSource as unknown as { admin: Partial<Admin> }).admin = {
      connect: async () => {},
      disconnect: async () => {},
      fetchTopicOffsets: async () => {
        throw new Error('This server does not host this topic-partition');
      },
    };
    await expect(offsetsSource.open()).rejects.toThrow(
      'cannot read the end offsets of --topic seats on 127.0.0.1:1: This server does not host this topic-partition',
    );
  });

  it('names a topic without partitions', async () => {
    const { offsetsSource } = source([{}]);
    await expect(offsetsSource.open()).rejects.toThrow('--topic seats has no partitions');
  });
});
