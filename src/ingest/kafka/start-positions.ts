import type { Admin } from 'kafkajs';
import { KafkaPartitionError, KafkaTopicError } from './errors.js';
import type { PartitionOffset } from './events.js';
import { describedPartitionCount } from './topic-metadata.js';

// Where the Kafka source starts each partition: the group's committed offset where it has
// one, else the offset `--from` names; read before the consumer joins the group.

/** Where to start a partition the group has no committed position for (`--from`). */
export type StartPosition =
  | { readonly kind: 'latest' }
  | { readonly kind: 'earliest' }
  /** The first message whose Kafka timestamp is at or after `ms` (epoch ms). */
  | { readonly kind: 'time'; readonly ms: number };

/**
 * The partition count of `--topic`, naming a topic that does not exist or may not be
 * described on `brokers`; other client errors pass through (the caller retries them).
 */
export async function sourcePartitionCount(
  admin: Admin,
  topic: string,
  brokers: string,
): Promise<number> {
  try {
    return await describedPartitionCount(admin, topic, `--topic ${topic}`);
  } catch (error) {
    const type = (error as { type?: string }).type;
    if (type === 'UNKNOWN_TOPIC_OR_PARTITION') {
      throw new KafkaTopicError(topic, `--topic ${topic} does not exist on ${brokers}`, {
        cause: error,
      });
    }
    if (type === 'TOPIC_AUTHORIZATION_FAILED') {
      throw new KafkaTopicError(
        topic,
        `--topic ${topic} may not be described by this client on ${brokers}`,
        { cause: error },
      );
    }
    throw error;
  }
}

/** Offsets of `--from` for the partitions without a committed position. */
export async function fromOptionOffsets(
  admin: Admin,
  topic: string,
  from: StartPosition,
  partitions: number[],
): Promise<PartitionOffset[]> {
  if (partitions.length === 0) return [];
  const entries =
    from.kind === 'time'
      ? await admin.fetchTopicOffsetsByTimestamp(topic, from.ms)
      : (await admin.fetchTopicOffsets(topic)).map((entry) => ({
          partition: entry.partition,
          offset: from.kind === 'earliest' ? entry.low : entry.high,
        }));
  return partitions.map((partition) => {
    const entry = entries.find((candidate) => candidate.partition === partition);
    const offset = Number(entry?.offset);
    if (entry === undefined || !Number.isSafeInteger(offset) || offset < 0) {
      throw new KafkaPartitionError(
        topic,
        partition,
        `no start offset for partition ${partition} of --topic ${topic} (--from ${from.kind})`,
      );
    }
    return { partition, offset };
  });
}
