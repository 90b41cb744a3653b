// Fakes of the kafkajs 2.2.4 calls the summary publisher makes (kafkajs docs, "Admin
// Client", "Producing Messages"): admin().fetchTopicMetadata for the summary topic's
// existence, producer({ idempotent, maxInFlightRequests }) with send({ topic, acks,
// messages }); and literal closed windows, one part with a hostile shard id.
import type { Kafka } from 'kafkajs';
import { KafkaSummaryPublisher } from '../../../src/ingest/kafka/summary-publisher.js';
import type { ClosedWindowParts } from '../../../src/partials/partial-count-sink.js';

export const closedWindows: ClosedWindowParts[] = [
  {
    start: 10_000,
    end: 20_000,
    parts: [
      { partition: 0, from: 5, to: 9, records: 4, late: 0, rejected: {}, counts: { a: 3, b: 1 } },
      {
        partition: 2,
        from: 40,
        to: 41,
        records: 1,
        late: 2,
        rejected: { 'not JSON': 1 },
        counts: { '<b>|': 7 },
      },
    ],
  },
  {
    start: 20_000,
    end: 30_000,
    parts: [{ partition: 0, from: 5, to: 9, records: 0, late: 0, rejected: {}, counts: {} }],
  },
];

export const publisherOptions = {
  brokers: ['127.0.0.1:1'],
  summaryTopic: 'seat-summaries',
  topic: 'seats',
  windowMs: 10_000,
  latenessMs: 2_000,
  shardFromText: 'key',
};

export interface Sent {
  topic: string;
  acks: number;
  messages: { key: string; value: string }[];
}

/** A publisher whose client is a fake; what the producer was given and sent. */
export function fakePublisher(partitions = 1) {
  const publisher = new KafkaSummaryPublisher(publisherOptions);
  const sent: Sent[] = [];
  const producerConfigs: unknown[] = [];
  const log: string[] = [];
  const kafka = {
    admin: () => ({
      connect: async () => {},
      disconnect: async () => {},
      fetchTopicMetadata: async () => ({
        topics: [
          {
            name: 'seat-summaries',
            partitions: Array.from({ length: partitions }, (_, i) => ({ partitionId: i })),
          },
        ],
      }),
    }),
    producer: (config: unknown) => {
      producerConfigs.push(config);
      return {
        connect: async () => void log.push('connect'),
        disconnect: async () => void log.push('disconnect'),
        send: async (record: Sent) => void sent.push(record),
      };
    },
  } as unknown as Kafka;
  (publisher as unknown as { kafka: Kafka }).kafka = kafka;
  return { publisher, sent, producerConfigs, log };
}
