import type { EachBatchPayload, Kafka } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import { UsageError } from '../../../src/errors/usage-error.js';
import { KafkaIngestError } from '../../../src/ingest/kafka/errors.js';
import { KafkaSummaryReader } from '../../../src/ingest/kafka/summary-reader.js';
import type { PartialSummary } from '../../../src/partials/partial-summary.js';
import { closedWindows, fakePublisher, type Sent } from './summary-fakes.js';

// Fakes of the kafkajs 2.2.4 calls used (kafkajs docs, "Admin Client: fetchOffsets",
// "Consuming Messages": subscribe, run({ eachBatch }), commitOffsets with metadata).
// Round trip: what the publisher sends, fed back as a batch, must reach onSummary equal to
// what it published. Commit offsets follow the ledger's rule (the lowest offset of a
// summary for a window not yet judged, else the one after the last read), by hand.

type Committed = { topic: string; partition: number; offset: string; metadata: string | null }[];

function fakeReader(
  options: { groupId?: string; fetchOffsets?: () => Promise<unknown>; partitions?: number } = {},
) {
  const summaries: PartialSummary[] = [];
  const refused: string[] = [];
  const reader = new KafkaSummaryReader({
    brokers: ['127.0.0.1:1'],
    topic: 'seat-summaries',
    from: 'earliest',
    onSummary: (summary) => summaries.push(summary),
    onRefused: (reason) => refused.push(reason),
    ...(options.groupId === undefined ? {} : { groupId: options.groupId }),
  });
  const commits: Committed[] = [];
  const subscribed: unknown[] = [];
  let eachBatch: ((payload: EachBatchPayload) => Promise<void>) | null = null;
  const kafka = {
    admin: () => ({
      connect: async () => {},
      disconnect: async () => {},
      fetchTopicMetadata: async () => ({
        topics: [
          {
            name: 'seat-summaries',
            partitions: Array.from({ length: options.partitions ?? 2 }, (_, i) => ({
              partitionId: i,
            })),
          },
        ],
      }),
      fetchOffsets: options.fetchOffsets ?? (async () => []),
    }),
    consumer: () => ({
      connect: async () => {},
      disconnect: async () => {},
      subscribe: async (subscription: unknown) => void subscribed.push(subscription),
      run: async (config: { eachBatch: (payload: EachBatchPayload) => Promise<void> }) => {
        eachBatch = config.eachBatch;
      },
      commitOffsets: async (offsets: Committed) => void commits.push(offsets),
    }),
  } as unknown as Kafka;
  (reader as unknown as { kafka: Kafka }).kafka = kafka;
  const deliver = (partition: number, messages: { offset: string; value: string }[]) =>
    eachBatch!({
      batch: {
        partition,
        messages: messages.map((m) => ({ offset: m.offset, value: Buffer.from(m.value) })),
      },
    } as unknown as EachBatchPayload);
  return { reader, summaries, refused, commits, subscribed, deliver };
}

async function published(): Promise<Sent> {
  const { publisher, sent } = fakePublisher();
  await publisher.connect();
  await publisher.publish(closedWindows, 1, 3);
  return sent[0];
}

describe('KafkaSummaryReader', () => {
  it('needs a broker, naming --brokers', () => {
    const make = () =>
      new KafkaSummaryReader({
        brokers: [],
        topic: 't',
        from: 'earliest',
        onSummary() {},
        onRefused() {},
      });
    expect(make).toThrow(UsageError);
    expect(make).toThrow('--brokers');
  });

  it('resumes after the newest window its group judged, or from nothing', async () => {
    const resumed = fakeReader({
      groupId: 'judge',
      fetchOffsets: async () => [
        {
          topic: 'seat-summaries',
          partitions: [
            { partition: 0, offset: '12', metadata: 'shardwise judged-through=20000' },
            { partition: 1, offset: '3', metadata: 'shardwise judged-through=30000' },
          ],
        },
      ],
    });
    expect(await resumed.reader.connect()).toBe(30_000);
    expect(await fakeReader().reader.connect()).toBeNull();
  });

  it('names the topic when it cannot be read', async () => {
    const broken = fakeReader({
      fetchOffsets: async () => {
        throw new Error('wrapper', { cause: new Error('The group is rebalancing') });
      },
    });
    const failure = broken.reader.connect();
    await expect(failure).rejects.toThrow(KafkaIngestError);
    await expect(failure).rejects.toThrow(
      'cannot read --merge seat-summaries: The group is rebalancing',
    );
    await expect(fakeReader({ partitions: 0 }).reader.connect()).rejects.toThrow(
      '--merge seat-summaries has no partitions',
    );
  });

  it('decodes what the publisher sent into the same summaries, refusing other messages', async () => {
    const sent = await published();
    const { reader, summaries, refused, subscribed, deliver } = fakeReader({ groupId: 'judge' });
    await reader.start();
    expect(subscribed).toEqual([{ topics: ['seat-summaries'], fromBeginning: true }]);
    await deliver(0, [
      { offset: '0', value: sent.messages[0].value },
      { offset: '1', value: 'not a summary' },
      { offset: '2', value: sent.messages[1].value },
    ]);
    // A redelivery from a lower offset is dropped.
    await deliver(0, [{ offset: '2', value: sent.messages[1].value }]);
    expect(
      summaries.map(({ start, end, epoch, sourcePartitions, parts }) => ({
        start,
        end,
        epoch,
        sourcePartitions,
        parts,
      })),
    ).toEqual(
      closedWindows.map(({ start, end, parts }) => ({
        start,
        end,
        epoch: 1,
        sourcePartitions: 3,
        parts,
      })),
    );
    expect(refused).toEqual(['not JSON']);
    await reader.close();
  });

  it('commits below the first summary of a window not judged, with the judged end', async () => {
    const sent = await published();
    const { reader, commits, deliver } = fakeReader({ groupId: 'judge' });
    await reader.start();
    await deliver(1, [
      { offset: '7', value: sent.messages[0].value },
      { offset: '8', value: sent.messages[1].value },
    ]);
    reader.markJudgedUpTo(20_000);
    await reader.close();
    expect(commits).toEqual([
      [
        {
          topic: 'seat-summaries',
          partition: 1,
          offset: '8',
          metadata: 'shardwise judged-through=20000',
        },
      ],
    ]);
  });

  it('commits nothing without --group (a new group per run)', async () => {
    const sent = await published();
    const { reader, commits, deliver } = fakeReader();
    await reader.start();
    await deliver(0, [{ offset: '0', value: sent.messages[0].value }]);
    reader.markJudgedUpTo(30_000);
    await reader.close();
    expect(commits).toEqual([]);
    expect(reader.groupId).toMatch(/^shardwise-merge-[0-9a-f-]{36}$/);
  });
});
