import type { Kafka } from 'kafkajs';
import { beforeEach, describe, expect, it, vi } from 'vitest';
import { UsageError } from '../../../src/errors/usage-error.js';
import { KafkaIngestError, KafkaTopicError } from '../../../src/ingest/kafka/errors.js';
import { produceToKafka } from '../../../src/ingest/kafka/sink.js';
import type { CountRecord } from '../../../src/window/count-record.js';

// Fakes of the kafkajs 2.2.4 calls `simulate --brokers` makes (kafkajs docs, "Admin
// Client: listTopics", "Producing Messages": producer({ idempotent, maxInFlightRequests,
// allowAutoTopicCreation }) and send({ topic, messages, acks })), put in place of the client
// connection.ts builds. acks -1 is "all in-sync replicas" (Kafka protocol, common
// practice). The message values are the JSON line of each record (docs/formats.md), the
// Kafka timestamp its ts in ms as a decimal string (kafkajs message format).

interface Sent {
  topic: string;
  acks: number;
  messages: { key: string | null; value: string; timestamp: string }[];
}

const broker = {
  topics: ['seats'],
  sent: [] as Sent[],
  producerConfigs: [] as unknown[],
  log: [] as string[],
  sendError: null as Error | null,
};

vi.mock('../../../src/ingest/kafka/connection.js', async (original) => ({
  ...(await original<typeof import('../../../src/ingest/kafka/connection.js')>()),
  createKafkaClient: () =>
    ({
      admin: () => ({
        connect: async () => void broker.log.push('admin connect'),
        disconnect: async () => void broker.log.push('admin disconnect'),
        listTopics: async () => broker.topics,
      }),
      producer: (config: unknown) => {
        broker.producerConfigs.push(config);
        return {
          connect: async () => void broker.log.push('producer connect'),
          disconnect: async () => void broker.log.push('producer disconnect'),
          send: async (record: Sent) => {
            if (broker.sendError !== null) throw broker.sendError;
            broker.sent.push(record);
          },
        };
      },
    }) as unknown as Kafka,
}));

beforeEach(() => {
  broker.topics = ['seats'];
  broker.sent = [];
  broker.producerConfigs = [];
  broker.log = [];
  broker.sendError = null;
});

const options = { brokers: ['127.0.0.1:1'], topic: 'seats' };
const records: CountRecord[] = [
  { ts: 1000, shard: 's-1', count: 3 },
  { ts: 1500.7, shard: 's-2', count: 1, key: 'user-4' },
  { ts: 2000, shard: 's-1', count: 2 },
];

describe('produceToKafka', () => {
  it('refuses an empty broker list or topic, naming the option', async () => {
    await expect(produceToKafka([], { ...options, brokers: [] })).rejects.toThrow(UsageError);
    await expect(produceToKafka([], { ...options, brokers: [] })).rejects.toThrow('--brokers');
    await expect(produceToKafka([], { ...options, topic: '' })).rejects.toThrow('--topic');
    await expect(produceToKafka([], { ...options, batchSize: 0 })).rejects.toThrow(
      'batchSize 0 is not a whole number of at least 1',
    );
  });

  it('writes one JSON message a record, keyed by shard, stamped with its time, in batches', async () => {
    const summary = await produceToKafka(records, { ...options, batchSize: 2 });
    expect(summary).toEqual({ records: 3, requests: 2 });
    expect(broker.producerConfigs).toMatchObject([
      { idempotent: true, maxInFlightRequests: 1, allowAutoTopicCreation: false },
    ]);
    expect(broker.sent.map(({ topic, acks }) => [topic, acks])).toEqual([
      ['seats', -1],
      ['seats', -1],
    ]);
    expect(broker.sent.flatMap((s) => s.messages)).toEqual([
      { key: 's-1', value: '{"ts":1000,"shard":"s-1","count":3}', timestamp: '1000' },
      { key: 's-2', value: '{"ts":1500.7,"shard":"s-2","key":"user-4"}', timestamp: '1500' },
      { key: 's-1', value: '{"ts":2000,"shard":"s-1","count":2}', timestamp: '2000' },
    ]);
    expect(broker.log).toEqual([
      'admin connect',
      'producer connect',
      'admin disconnect',
      'producer disconnect',
    ]);
  });

  it('sends no key with keyBy none, and flushes at each array boundary', async () => {
    const summary = await produceToKafka([[records[0], records[1]], [records[2]]], {
      ...options,
      keyBy: 'none',
    });
    expect(summary).toEqual({ records: 3, requests: 2 });
    expect(broker.sent.map((s) => s.messages.map((m) => m.key))).toEqual([[null, null], [null]]);
  });

  it('names a topic that does not exist, without creating it', async () => {
    broker.topics = ['other'];
    const failure = produceToKafka(records, options);
    await expect(failure).rejects.toThrow(KafkaTopicError);
    await expect(failure).rejects.toThrow(
      '--topic seats does not exist on 127.0.0.1:1 (create it first; topics are not created on the fly)',
    );
    expect(broker.sent).toEqual([]);
  });

  it('names the topic, brokers and cause when a write fails', async () => {
    broker.sendError = new Error('write', { cause: new Error('Not authorized to access topics') });
    const failure = produceToKafka(records, options);
    await expect(failure).rejects.toThrow(KafkaIngestError);
    await expect(failure).rejects.toThrow(
      'cannot write to --topic seats on 127.0.0.1:1: Not authorized to access topics',
    );
  });

  it('stops at an abort, keeping what was sent', async () => {
    const stop = new AbortController();
    async function* paced() {
      yield [records[0]];
      stop.abort();
      yield [records[1]];
    }
    const summary = await produceToKafka(paced(), { ...options, signal: stop.signal });
    expect(summary).toEqual({ records: 1, requests: 1 });
  });
});
