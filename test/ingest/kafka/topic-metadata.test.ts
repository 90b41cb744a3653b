import type { Admin, Kafka } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import { KafkaTopicError } from '../../../src/ingest/kafka/errors.js';
import {
  describedPartitionCount,
  partitionCount,
} from '../../../src/ingest/kafka/topic-metadata.js';

// Fakes of the kafkajs 2.2.4 admin calls used: fetchTopicMetadata answers
// { topics: [{ name, partitions: [...] }] } (kafkajs docs, "Admin Client: Fetch topic
// metadata"); the partition count is the length of that list.

function admin(metadata: () => Promise<unknown>, log: string[] = []): Admin {
  return {
    connect: async () => void log.push('connect'),
    disconnect: async () => void log.push('disconnect'),
    fetchTopicMetadata: async ({ topics }: { topics: string[] }) => {
      log.push(`metadata ${topics.join(',')}`);
      return metadata();
    },
  } as unknown as Admin;
}

const threePartitions = async () => ({
  topics: [
    { name: 'seats', partitions: [{ partitionId: 0 }, { partitionId: 1 }, { partitionId: 2 }] },
  ],
});

describe('describedPartitionCount', () => {
  it('counts the partitions the broker describes', async () => {
    expect(await describedPartitionCount(admin(threePartitions), 'seats', '--topic seats')).toBe(3);
  });

  it('names the topic with its label when it has none', async () => {
    const none = admin(async () => ({ topics: [{ name: 'seats', partitions: [] }] }));
    const failure = describedPartitionCount(none, 'seats', '--merge seats');
    await expect(failure).rejects.toThrow(KafkaTopicError);
    await expect(failure).rejects.toThrow('--merge seats has no partitions');
    const missing = admin(async () => ({ topics: [] }));
    await expect(describedPartitionCount(missing, 'seats', 'topic seats')).rejects.toThrow(
      'topic seats has no partitions',
    );
  });
});

describe('partitionCount', () => {
  const options = { brokers: ['127.0.0.1:1', '127.0.0.1:2'] };

  it('connects an admin, asks for the one topic and disconnects', async () => {
    const log: string[] = [];
    const kafka = { admin: () => admin(threePartitions, log) } as unknown as Kafka;
    expect(await partitionCount(kafka, 'seats', options)).toBe(3);
    expect(log).toEqual(['connect', 'metadata seats', 'disconnect']);
  });

  it('names the topic, the brokers and the innermost cause when the topic cannot be described', async () => {
    const log: string[] = [];
    const cause = new Error('outer', {
      cause: new Error('This server does not host this topic-partition'),
    });
    const kafka = {
      admin: () =>
        admin(async () => {
          throw cause;
        }, log),
    } as unknown as Kafka;
    const failure = partitionCount(kafka, 'seats', options);
    await expect(failure).rejects.toThrow(KafkaTopicError);
    await expect(failure).rejects.toThrow(
      'topic seats cannot be described on 127.0.0.1:1,127.0.0.1:2: This server does not host this topic-partition',
    );
    expect(log.at(-1)).toBe('disconnect');
  });

  it('passes its own no-partitions error through unwrapped', async () => {
    const kafka = {
      admin: () => admin(async () => ({ topics: [{ name: 'seats', partitions: [] }] })),
    } as unknown as Kafka;
    await expect(partitionCount(kafka, 'seats', options)).rejects.toThrow(
      /^topic seats has no partitions$/,
    );
  });
});
