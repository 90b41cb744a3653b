import type { Admin, Kafka } from 'kafkajs';
import { brokerText, type KafkaConnectionOptions } from './connection.js';
import { causeText, KafkaTopicError } from './errors.js';

/**
 * A topic's partition count through an admin client already connected; a
 * KafkaTopicError `<label> has no partitions` when it has none. Other errors
 * of the client pass through for the caller to name.
 *
 * @param label how the topic is named in the message (`--topic t`, `topic t`, `--merge t`)
 */
export async function describedPartitionCount(
  admin: Admin,
  topic: string,
  label: string,
): Promise<number> {
  const { topics } = await admin.fetchTopicMetadata({ topics: [topic] });
  const count = topics[0]?.partitions.length ?? 0;
  if (count === 0) throw new KafkaTopicError(topic, `${label} has no partitions`);
  return count;
}

/** A topic's partition count; a KafkaTopicError naming the topic when it has none or cannot be described. */
export async function partitionCount(
  kafka: Kafka,
  topic: string,
  options: KafkaConnectionOptions,
): Promise<number> {
  const admin = kafka.admin();
  try {
    await admin.connect();
    return await describedPartitionCount(admin, topic, `topic ${topic}`);
  } catch (error) {
    if (error instanceof KafkaTopicError) throw error;
    throw new KafkaTopicError(
      topic,
      `topic ${topic} cannot be described on ${brokerText(options)}: ${causeText(error)}`,
      { cause: error },
    );
  } finally {
    await admin.disconnect().catch(() => undefined);
  }
}
