import { describe, expect, it } from 'vitest';
import { UsageError } from '../../../src/errors/usage-error.js';
import { KafkaSummaryPublisher } from '../../../src/ingest/kafka/summary-publisher.js';
import { decodePartialSummary } from '../../../src/partials/partial-summary.js';
import { closedWindows, fakePublisher, publisherOptions } from './summary-fakes.js';

// Fakes of the kafkajs 2.2.4 calls used (kafkajs docs, "Admin Client", "Producing
// Messages"): admin().fetchTopicMetadata for the summary topic's existence, producer({
// idempotent, maxInFlightRequests }) with send({ topic, acks, messages }). acks -1 is
// "all in-sync replicas" (Kafka protocol, common practice). Summaries decoded back by
// decodePartialSummary must equal what was closed.

describe('KafkaSummaryPublisher', () => {
  it('refuses a summary topic that is the source topic, naming --summaries', () => {
    expect(() => new KafkaSummaryPublisher({ ...publisherOptions, summaryTopic: 'seats' })).toThrow(
      UsageError,
    );
    expect(() => new KafkaSummaryPublisher({ ...publisherOptions, summaryTopic: 'seats' })).toThrow(
      '--summaries',
    );
  });

  it('refuses to publish before it is connected', async () => {
    const { publisher } = fakePublisher();
    await expect(publisher.publish(closedWindows, 0, 3)).rejects.toThrow(
      'the summary publisher is not connected',
    );
  });

  it('sends one summary per window, keyed by its start, acknowledged by all replicas', async () => {
    const { publisher, sent, producerConfigs, log } = fakePublisher();
    await publisher.connect();
    expect(producerConfigs).toMatchObject([{ idempotent: true, maxInFlightRequests: 1 }]);
    await publisher.publish(closedWindows, 2, 3);
    expect(sent).toHaveLength(1);
    expect(sent[0].topic).toBe('seat-summaries');
    expect(sent[0].acks).toBe(-1);
    expect(sent[0].messages.map((m) => m.key)).toEqual(['10000', '20000']);
    expect(sent[0].messages.map((m) => decodePartialSummary(m.value))).toEqual(
      closedWindows.map(({ start, end, parts }) => ({
        partial: 1,
        instance: publisher.instance,
        epoch: 2,
        topic: 'seats',
        sourcePartitions: 3,
        windowMs: 10_000,
        latenessMs: 2_000,
        shardFrom: 'key',
        start,
        end,
        parts,
      })),
    );
    expect(publisher.stats).toEqual({ summaries: 2, parts: 3 });
    await publisher.publish([], 2, 3);
    expect(sent).toHaveLength(1);
    await publisher.close();
    await publisher.close();
    expect(log).toEqual(['connect', 'disconnect']);
  });

  it('names the summary topic when it has no partitions', async () => {
    const { publisher } = fakePublisher(0);
    await expect(publisher.connect()).rejects.toThrow('topic seat-summaries has no partitions');
  });
});
