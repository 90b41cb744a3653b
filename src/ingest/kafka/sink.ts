import type { Message, Producer } from 'kafkajs';
import type { CountRecord } from '../../window/count-record.js';
import { UsageError } from '../../errors/usage-error.js';
import { encodeJsonLine } from '../encode.js';
import {
  brokerText,
  createKafkaClient,
  kafkajs,
  type KafkaConnectionOptions,
} from './connection.js';
import {
  causeText,
  isRetriable,
  isRetriableConnectError,
  KafkaIngestError,
  KafkaTopicError,
} from './errors.js';
import type { KafkaSourceListener } from './events.js';
import {
  checkBackoffPolicy,
  retryWithBackoff,
  unreachableBrokersError,
  type BackoffPolicy,
} from './retry.js';

/** Settings of {@link produceToKafka}. */
export interface KafkaSinkOptions extends KafkaConnectionOptions {
  /** `--topic`; it must exist (topics are not created on the fly). */
  readonly topic: string;
  /**
   * Message key: `shard` (default) keys each message by its shard id, so a
   * shard's reports stay in order on one partition; `none` sends no key and
   * spreads messages over the partitions.
   */
  readonly keyBy?: 'shard' | 'none';
  /** Most messages per produce request (default 1000). */
  readonly batchSize?: number;
  /** Longest a record waits for its batch to fill, ms (default 50). */
  readonly lingerMs?: number;
  /** Connecting at start (default 8 attempts, 250 ms doubling to 8 s). */
  readonly connectRetry?: BackoffPolicy;
  /** Stops producing; what was sent stays sent. */
  readonly signal?: AbortSignal;
  /** Receives connection retries and client warnings (the source's event shapes). */
  readonly onEvent?: KafkaSourceListener;
}

/** What {@link produceToKafka} sent. */
export interface ProduceSummary {
  /** Records written (one message each). */
  readonly records: number;
  /** Produce requests made. */
  readonly requests: number;
}

const defaultConnectRetry: BackoffPolicy = { attempts: 8, initialDelayMs: 250, maxDelayMs: 8000 };

/**
 * Writes records to a Kafka topic, one JSON message per record
 * ({@link encodeJsonLine}, with `ts` in each record) whose Kafka timestamp is
 * the record's own, so `--from <time>` finds them. Messages are keyed by
 * shard and placed by the murmur2 partitioner, the one Java clients use,
 * named explicitly. The producer is idempotent with acks from all in-sync
 * replicas: a retry after a broker restart cannot write a record twice.
 *
 * `records` may yield records or arrays of records (a tick of a scenario);
 * an array boundary flushes, and so does `lingerMs` without one, so paced
 * records go out when they are made. Resolves when every record is
 * acknowledged; rejects with a {@link KafkaIngestError} (or its
 * subclasses) naming brokers or topic.
 */
export async function produceToKafka(
  records:
    | Iterable<CountRecord | readonly CountRecord[]>
    | AsyncIterable<CountRecord | readonly CountRecord[]>,
  options: KafkaSinkOptions,
): Promise<ProduceSummary> {
  if (options.brokers.length === 0) {
    throw new UsageError('--brokers', '', 'names no broker (give host:port[,host:port])');
  }
  if (options.topic === '') throw new UsageError('--topic', '', 'is empty');
  const batchSize = options.batchSize ?? 1000;
  if (!Number.isSafeInteger(batchSize) || batchSize < 1) {
    throw new RangeError(`batchSize ${batchSize} is not a whole number of at least 1`);
  }
  const lingerMs = options.lingerMs ?? 50;
  const connectRetry = checkBackoffPolicy(
    options.connectRetry ?? defaultConnectRetry,
    'connectRetry',
  );
  const emit = options.onEvent ?? (() => undefined);
  const kafka = createKafkaClient(options, (entry) => emit({ type: 'client-log', ...entry }), 5);
  const producer = kafka.producer({
    createPartitioner: kafkajs().Partitioners.DefaultPartitioner,
    allowAutoTopicCreation: false,
    idempotent: true,
    maxInFlightRequests: 1,
  });
  const brokers = brokerText(options);
  const keyed = (options.keyBy ?? 'shard') === 'shard';
  try {
    const admin = createKafkaClient(
      options,
      (entry) => emit({ type: 'client-log', ...entry }),
      0,
    ).admin({ retry: { retries: 0 } });
    await connectProducer(producer, admin, options, connectRetry);
    let pending: Message[] = [];
    let requests = 0;
    let written = 0;
    let sending: Promise<void> = Promise.resolve();
    let failure: unknown = null;
    let lingerTimer: NodeJS.Timeout | null = null;
    const flush = (): Promise<void> => {
      if (lingerTimer !== null) {
        clearTimeout(lingerTimer);
        lingerTimer = null;
      }
      if (pending.length === 0) return sending;
      const messages = pending;
      pending = [];
      sending = sending.then(async () => {
        if (failure !== null) return;
        try {
          await producer.send({
            topic: options.topic,
            messages,
            acks: -1,
            compression: kafkajs().CompressionTypes.None,
          });
          requests++;
          written += messages.length;
        } catch (error) {
          failure = error;
        }
      });
      return sending;
    };
    const add = async (record: CountRecord): Promise<void> => {
      pending.push({
        key: keyed ? record.shard : null,
        value: encodeJsonLine(record),
        timestamp: String(Math.floor(record.ts)),
      });
      if (pending.length >= batchSize) await flush();
      else lingerTimer ??= setTimeout(() => void flush(), lingerMs);
    };
    for await (const item of records as AsyncIterable<CountRecord | readonly CountRecord[]>) {
      if (options.signal?.aborted || failure !== null) break;
      if (isRecordArray(item)) {
        for (const record of item) await add(record);
        await flush();
      } else {
        await add(item);
      }
    }
    await flush();
    if (failure !== null) {
      throw new KafkaIngestError(
        `cannot write to --topic ${options.topic} on ${brokers}: ${causeText(failure)}`,
        { retriable: isRetriable(failure), cause: failure },
      );
    }
    return { records: written, requests };
  } finally {
    await producer.disconnect().catch(() => undefined);
  }
}

function isRecordArray(item: CountRecord | readonly CountRecord[]): item is readonly CountRecord[] {
  return Array.isArray(item);
}

/** Checks the topic exists, then connects the producer, retrying with backoff while brokers are away. */
async function connectProducer(
  producer: Producer,
  admin: ReturnType<ReturnType<typeof createKafkaClient>['admin']>,
  options: KafkaSinkOptions,
  policy: BackoffPolicy,
): Promise<void> {
  const brokers = brokerText(options);
  const emit = options.onEvent ?? (() => undefined);
  try {
    await retryWithBackoff(
      async () => {
        await admin.connect();
        const topics = await admin.listTopics();
        if (!topics.includes(options.topic)) {
          throw new KafkaTopicError(
            options.topic,
            `--topic ${options.topic} does not exist on ${brokers} (create it first; topics are not created on the fly)`,
          );
        }
        await producer.connect();
      },
      policy,
      {
        signal: options.signal,
        shouldRetry: isRetriableConnectError,
        onRetry: (failures, delayMs, error) =>
          emit({ type: 'connect-retry', brokers, failures, delayMs, error: causeText(error) }),
      },
    );
  } catch (error) {
    const unreachable = unreachableBrokersError(error, options.brokers);
    if (unreachable !== null) throw unreachable;
    if (error instanceof KafkaIngestError) throw error;
    throw new KafkaIngestError(
      `cannot connect to the Kafka brokers ${brokers}: ${causeText(error)}`,
      {
        cause: error,
      },
    );
  } finally {
    await admin.disconnect().catch(() => undefined);
  }
}
