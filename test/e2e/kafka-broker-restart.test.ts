// The broker dies mid-stream (SIGKILL, no clean shutdown) and comes back: the source's
// consumer crashes, a new one is made, reading goes on from the commit, and the per-window
// totals are exactly those of the records produced, before and after the outage. This test
// stops and restarts the shared test broker with scripts/kafka-broker.sh.
import { afterAll, describe, expect, it } from 'vitest';
import { encodeJsonLine } from '../../src/ingest/encode.js';
import { produceToKafka } from '../../src/ingest/kafka/sink.js';
import { KafkaSource } from '../../src/ingest/kafka/source.js';
import { brokerList } from './kafka-env.js';
import {
  EventLog,
  JudgingPipeline,
  TopicPool,
  countRecords,
  expectedWindows,
  killBroker,
  produceMessages,
  sourceOptions,
  startBroker,
  waitFor,
} from './kafka-fixtures.js';

const topics = new TopicPool();
afterAll(() => topics.cleanUp());

const windowMs = 10_000;
const latenessMs = 5000;

describe('KafkaSource through a broker restart', () => {
  it('loses and doubles nothing when the broker is killed mid-stream and restarted', async () => {
    const topic = await topics.fresh('broker-kill', 2);
    const groupId = `shardwise-e2e-broker-kill-${Date.now()}`;
    const base = Date.UTC(2025, 11, 5, 10, 0, 0);
    const records = countRecords(base, 40, 50, 8); // 2000 records, 4 windows
    const before = records.filter((record) => record.ts < base + 25_000);
    const after = records.filter((record) => record.ts >= base + 25_000);
    await produceMessages(
      topic,
      before.map((record) => ({
        key: record.shard,
        value: encodeJsonLine(record),
        timestamp: String(record.ts),
      })),
    );

    const events = new EventLog();
    const source = new KafkaSource(
      sourceOptions(topic, {
        groupId,
        windows: { windowMs, latenessMs },
        onEvent: events.listener,
        // Small fetches and a slow reader keep the stream going while the broker dies.
        maxBytesPerPartition: 1024,
        consumerRetries: 1,
        connectionTimeoutMs: 1000,
        consumerRestart: { attempts: 40, initialDelayMs: 200, maxDelayMs: 2000 },
      }),
    );
    const pipeline = new JudgingPipeline(source, windowMs, latenessMs);
    const reading = (async () => {
      for await (const batch of source.batches()) {
        for (const item of batch) {
          if ('reason' in item) pipeline.reject(item.reason);
          else pipeline.record(item.ts, item.shard, item.count);
        }
        await new Promise((resolve) => setTimeout(resolve, 20));
      }
    })();

    try {
      await waitFor(() => pipeline.records >= 400, 'the first 400 records');
      expect(pipeline.records).toBeLessThan(before.length);
      await killBroker();
      await new Promise((resolve) => setTimeout(resolve, 1500));
      await startBroker();
      await waitFor(
        () => events.of('consumer-recreated').length > 0,
        'a new consumer after the crash',
        60_000,
      );
      // The rest arrives live, from the project's own producer.
      const sent = await produceToKafka(after, {
        brokers: brokerList(),
        topic,
        batchSize: 30,
        lingerMs: 5,
      });
      expect(sent.records).toBe(after.length);
      await waitFor(() => pipeline.records >= records.length, 'every record', 60_000);
    } finally {
      await source.close();
      await reading;
    }
    pipeline.windows.closeAll();

    expect(events.of('consumer-crashed').length).toBeGreaterThan(0);
    // The new consumer resumed at the commit, below records already counted, and skipped them.
    expect(source.stats.redeliveriesSkipped).toBeGreaterThan(0);
    expect(pipeline.records).toBe(records.length);
    expect(pipeline.windows.totals.lateRecords).toBe(0);
    expect(pipeline.judged.filter((window) => window.total > 0)).toEqual(
      expectedWindows(records, windowMs),
    );
  });
});
