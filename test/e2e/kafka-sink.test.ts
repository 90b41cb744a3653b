// produceToKafka (for `simulate --to kafka`) on the real broker: a scenario's records come
// back unchanged through the source and through kcat, keyed by shard and stamped with the
// record's own time; a missing topic or unreachable brokers fail with messages naming them.
import { execFile } from 'node:child_process';
import { promisify } from 'node:util';
import { afterAll, describe, expect, it } from 'vitest';
import { encodeJsonLine } from '../../src/ingest/encode.js';
import { BrokersUnreachableError, KafkaTopicError } from '../../src/ingest/kafka/errors.js';
import { produceToKafka } from '../../src/ingest/kafka/sink.js';
import { KafkaSource } from '../../src/ingest/kafka/source.js';
import { ScenarioSource } from '../../src/ingest/scenario-source.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import { brokerAddress, brokerList } from './kafka-env.js';
import { CollectingSink, TopicPool, sourceOptions } from './kafka-fixtures.js';

const run = promisify(execFile);
const topics = new TopicPool();
afterAll(() => topics.cleanUp());

describe('produceToKafka on the test broker', () => {
  it('writes a scenario so that the source and kcat read back the same records, keyed and stamped', async () => {
    const topic = await topics.fresh('simulate', 4);
    const scenario = runScenario('hotspot', {
      seed: 7,
      startMs: Date.UTC(2025, 11, 1, 10, 0, 0),
      durationMs: 30_000,
    });
    const expected = [...scenario.records()];
    expect(expected.length).toBeGreaterThan(1000);
    // Arrays of records, as the scenario source hands them out, flush at each boundary.
    const summary = await produceToKafka(new ScenarioSource(scenario, { pace: 'fast' }).batches(), {
      brokers: brokerList(),
      topic,
      batchSize: 500,
    });
    expect(summary.records).toBe(expected.length);
    expect(summary.requests).toBeGreaterThanOrEqual(Math.ceil(expected.length / 500));

    const sink = new CollectingSink();
    const source = new KafkaSource(sourceOptions(topic, { stopAtEnd: true }));
    try {
      await source.decodeInto(sink);
    } finally {
      await source.close();
    }
    expect(sink.sorted()).toEqual(expected.map((record) => JSON.stringify(record)).sort());

    const { stdout } = await run(
      'kcat',
      ['-C', '-b', brokerAddress(), '-t', topic, '-o', 'beginning', '-J', '-e', '-q'],
      { timeout: 30_000, maxBuffer: 64 << 20 },
    );
    const messages = stdout
      .split('\n')
      .filter((line) => line !== '')
      .map(
        (line) =>
          JSON.parse(line) as { key: string; payload: string; ts: number; partition: number },
      );
    expect(messages).toHaveLength(expected.length);
    const partitionOfShard = new Map<string, number>();
    for (const message of messages) {
      const record = JSON.parse(message.payload) as { ts: number; shard: string };
      expect(message.key).toBe(record.shard);
      expect(message.ts).toBe(record.ts);
      // One shard, one partition: a shard's reports keep their order.
      expect(partitionOfShard.get(record.shard) ?? message.partition).toBe(message.partition);
      partitionOfShard.set(record.shard, message.partition);
    }
    expect(new Set(messages.map((message) => message.payload))).toEqual(
      new Set(expected.map((record) => encodeJsonLine(record))),
    );
  });

  it('fails naming the topic when it does not exist, and the brokers when none answers', async () => {
    const missing = await produceToKafka([], {
      brokers: brokerList(),
      topic: 'shardwise-e2e-sink-no-such-topic',
    }).catch((error: unknown) => error);
    expect(missing).toBeInstanceOf(KafkaTopicError);
    expect((missing as Error).message).toMatch(
      /^--topic shardwise-e2e-sink-no-such-topic does not exist on /,
    );

    const unreachable = await produceToKafka([], {
      brokers: ['127.0.0.1:9'],
      topic: 't',
      connectRetry: { attempts: 3, initialDelayMs: 50, maxDelayMs: 100 },
      connectionTimeoutMs: 500,
    }).catch((error: unknown) => error);
    expect(unreachable).toBeInstanceOf(BrokersUnreachableError);
    expect((unreachable as Error).message).toMatch(
      /^cannot reach the Kafka brokers 127\.0\.0\.1:9 \(--brokers\) after 3 attempts/,
    );
  });
});
