import type { Admin } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import { KafkaPartitionError, KafkaTopicError } from '../../../src/ingest/kafka/errors.js';
import {
  fromOptionOffsets,
  sourcePartitionCount,
} from '../../../src/ingest/kafka/start-positions.js';

// The admin calls as kafkajs 2.2.4 answers them: offsets as decimal strings, a topic's
// metadata with its partitions; errors carrying the Kafka protocol's error `type`.
function admin(over: Partial<Record<keyof Admin, unknown>>): Admin {
  return over as unknown as Admin;
}

const offsets = [
  { partition: 0, offset: '40', low: '10', high: '40' },
  { partition: 1, offset: '7', low: '0', high: '7' },
];

describe('fromOptionOffsets', () => {
  it('--from earliest takes each partition’s low offset, latest its high', async () => {
    const client = admin({ fetchTopicOffsets: async () => offsets });
    expect(await fromOptionOffsets(client, 'requests', { kind: 'earliest' }, [0, 1])).toEqual([
      { partition: 0, offset: 10 },
      { partition: 1, offset: 0 },
    ]);
    expect(await fromOptionOffsets(client, 'requests', { kind: 'latest' }, [1])).toEqual([
      { partition: 1, offset: 7 },
    ]);
  });

  it('--from a time asks the broker for the offsets at that timestamp', async () => {
    const asked: unknown[] = [];
    const client = admin({
      fetchTopicOffsetsByTimestamp: async (topic: string, ms: number) => {
        asked.push([topic, ms]);
        return [{ partition: 0, offset: '25' }];
      },
    });
    expect(
      await fromOptionOffsets(client, 'requests', { kind: 'time', ms: 1764547200000 }, [0]),
    ).toEqual([{ partition: 0, offset: 25 }]);
    expect(asked).toEqual([['requests', 1764547200000]]);
  });

  it('no partitions to place: no call; a partition without a usable offset is named', async () => {
    expect(await fromOptionOffsets(admin({}), 'requests', { kind: 'latest' }, [])).toEqual([]);
    const client = admin({
      fetchTopicOffsetsByTimestamp: async () => [{ partition: 0, offset: '-1' }],
    });
    const failure = fromOptionOffsets(client, 'requests', { kind: 'time', ms: 0 }, [0, 2]);
    await expect(failure).rejects.toBeInstanceOf(KafkaPartitionError);
    await expect(failure).rejects.toThrow(
      'no start offset for partition 0 of --topic requests (--from time)',
    );
  });
});

describe('sourcePartitionCount', () => {
  it('the partitions of the topic’s metadata', async () => {
    const client = admin({
      fetchTopicMetadata: async () => ({
        topics: [{ name: 'requests', partitions: [{}, {}, {}] }],
      }),
    });
    expect(await sourcePartitionCount(client, 'requests', 'h:9092')).toBe(3);
  });

  it('a topic that does not exist or may not be described is named with the brokers', async () => {
    const failing = (type: string) =>
      admin({
        fetchTopicMetadata: async () => {
          throw Object.assign(new Error(type), { type });
        },
      });
    const missing = sourcePartitionCount(
      failing('UNKNOWN_TOPIC_OR_PARTITION'),
      'requests',
      'h:9092',
    );
    await expect(missing).rejects.toBeInstanceOf(KafkaTopicError);
    await expect(missing).rejects.toThrow('--topic requests does not exist on h:9092');
    await expect(
      sourcePartitionCount(failing('TOPIC_AUTHORIZATION_FAILED'), 'requests', 'h:9092'),
    ).rejects.toThrow('--topic requests may not be described by this client on h:9092');
    // Anything else passes through for the caller to retry.
    await expect(
      sourcePartitionCount(failing('LEADER_NOT_AVAILABLE'), 'requests', 'h:9092'),
    ).rejects.toThrow('LEADER_NOT_AVAILABLE');
  });
});
