import { randomUUID } from 'node:crypto';
import type { Kafka, Producer } from 'kafkajs';
import type { ClosedWindowParts } from '../../partials/partial-count-sink.js';
import { encodePartialSummary, type PartialSummary } from '../../partials/partial-summary.js';
import { UsageError } from '../../errors/usage-error.js';
import { createKafkaClient, kafkajs, type KafkaConnectionOptions } from './connection.js';
import { partitionCount } from './topic-metadata.js';

/** Settings of a {@link KafkaSummaryPublisher}: what every summary of the instance names. */
export interface SummaryPublisherOptions extends KafkaConnectionOptions {
  /** `--summaries`: the topic partial summaries go to (must exist). */
  readonly summaryTopic: string;
  /** `--topic`: the source topic counted. */
  readonly topic: string;
  readonly windowMs: number;
  readonly latenessMs: number;
  /** `--shard-from` as written. */
  readonly shardFromText: string;
}

/**
 * Publishes the closed windows of a counting instance (`shardwise count`), one partial
 * summary per window, through an idempotent producer (a retry writes nothing twice) with
 * acknowledgement by all in-sync replicas: {@link publish} resolves only once they have
 * them, and only then may the source be committed past their records.
 */
export class KafkaSummaryPublisher {
  /** This process's id in the summaries. */
  readonly instance = randomUUID();
  private readonly options: SummaryPublisherOptions;
  private readonly kafka: Kafka;
  private producer: Producer | null = null;
  private counts = { summaries: 0, parts: 0 };

  constructor(options: SummaryPublisherOptions) {
    if (options.summaryTopic === options.topic) {
      throw new UsageError('--summaries', options.summaryTopic, 'must not be the source --topic');
    }
    this.options = options;
    this.kafka = createKafkaClient(options, () => undefined, 5);
  }

  /** Summaries and parts published. */
  get stats(): { readonly summaries: number; readonly parts: number } {
    return { ...this.counts };
  }

  /** Checks that the summary topic exists and connects the producer. */
  async connect(): Promise<void> {
    await partitionCount(this.kafka, this.options.summaryTopic, this.options);
    const producer = this.kafka.producer({
      idempotent: true,
      maxInFlightRequests: 1,
      createPartitioner: kafkajs().Partitioners.DefaultPartitioner,
    });
    this.producer = producer;
    await producer.connect();
  }

  /** Publishes one summary per window, in order; resolves once all are acknowledged. */
  async publish(
    windows: readonly ClosedWindowParts[],
    epoch: number,
    sourcePartitions: number,
  ): Promise<void> {
    const producer = this.producer;
    if (producer === null) throw new Error('the summary publisher is not connected');
    if (windows.length === 0) return;
    const messages = windows.map(({ start, end, parts }) => {
      const summary: PartialSummary = {
        partial: 1,
        instance: this.instance,
        epoch,
        topic: this.options.topic,
        sourcePartitions,
        windowMs: this.options.windowMs,
        latenessMs: this.options.latenessMs,
        shardFrom: this.options.shardFromText,
        start,
        end,
        parts,
      };
      return { key: String(start), value: encodePartialSummary(summary) };
    });
    await producer.send({ topic: this.options.summaryTopic, acks: -1, messages });
    this.counts.summaries += messages.length;
    for (const window of windows) this.counts.parts += window.parts.length;
  }

  /** Disconnects. Idempotent. */
  async close(): Promise<void> {
    const producer = this.producer;
    this.producer = null;
    await producer?.disconnect().catch(() => undefined);
  }
}
