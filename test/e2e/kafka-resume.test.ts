// Offsets on the real broker: a source stopped mid-stream commits nothing past a record of
// an open window, and a new source on the same group finishes the job with per-window
// totals exactly those of the records (no loss, no double count); a rebalance that hands
// partitions away and back replays from the commit and the replays are skipped.
import { Kafka, logLevel } from 'kafkajs';
import { afterAll, describe, expect, it } from 'vitest';
import { KafkaSource } from '../../src/ingest/kafka/source.js';
import { brokerList } from './kafka-env.js';
import {
  EventLog,
  JudgingPipeline,
  TopicPool,
  countRecords,
  expectedWindows,
  produceMessages,
  sourceOptions,
  testClient,
  waitFor,
  type JudgedWindow,
} from './kafka-fixtures.js';
import { encodeJsonLine } from '../../src/ingest/encode.js';
import type { CountRecord } from '../../src/window/count-record.js';

const topics = new TopicPool();
afterAll(() => topics.cleanUp());

const windowMs = 10_000;
const latenessMs = 5000;
const base = Date.UTC(2025, 11, 4, 10, 0, 0);

/** Keyed by shard, so each shard's records keep their order on one partition. */
function messagesOf(records: readonly CountRecord[]) {
  return records.map((record) => ({
    key: record.shard,
    value: encodeJsonLine(record),
    timestamp: String(record.ts),
  }));
}

// A backlog is read with the default fetch sizes: the source's partition alignment keeps
// the partitions together in event time, and the lateness covers what remains. Records
// produced while the source is live come as a steady producer sends them (under a
// second of event time a request), which the lateness covers. The tests check that no
// record came late, so a broken assumption fails instead of passing unnoticed.
const live = { windows: { windowMs, latenessMs } };
const steadyRequest = 30;

function mergeRuns(...runs: JudgedWindow[][]): JudgedWindow[] {
  return runs.flat().filter((window) => window.total > 0);
}

describe('KafkaSource offsets on the test broker', () => {
  it('stopped mid-stream and restarted on the same group, judges every window exactly once with exact totals', async () => {
    const topic = await topics.fresh('resume', 3);
    const groupId = `shardwise-e2e-resume-${Date.now()}`;
    const records = countRecords(base, 80, 50, 12); // 4000 records, 8 windows
    await produceMessages(topic, messagesOf(records));

    // Run 1: stop from inside the pipeline once 2200 records are counted.
    const first = new KafkaSource(sourceOptions(topic, { groupId, ...live }));
    const firstRun = new JudgingPipeline(first, windowMs, latenessMs);
    const stopper = {
      record(ts: number, shard: string, count: number) {
        firstRun.record(ts, shard, count);
        if (firstRun.records === 2200) void first.close();
      },
      reject: (reason: Parameters<typeof firstRun.reject>[0]) => firstRun.reject(reason),
    };
    await first.decodeInto(stopper);
    await first.close();
    expect(firstRun.windows.totals.lateRecords).toBe(0);
    expect(firstRun.judged.length).toBeGreaterThanOrEqual(2);
    const judgedThrough = firstRun.judged[firstRun.judged.length - 1].end;

    // The commit lags the records counted: open windows are replayed, never skipped.
    const admin = testClient().admin();
    await admin.connect();
    const [committed] = await admin.fetchOffsets({ groupId, topics: [topic] });
    await admin.disconnect();
    const committedTotal = committed.partitions.reduce((sum, p) => sum + Number(p.offset), 0);
    expect(committedTotal).toBeLessThan(first.stats.messages);
    for (const partition of committed.partitions) {
      expect(partition.metadata).toBe(`shardwise judged-through=${judgedThrough}`);
    }

    // Run 2: same group; resumes at the commit and finishes the topic.
    const second = new KafkaSource(sourceOptions(topic, { groupId, stopAtEnd: true, ...live }));
    const info = await second.connect();
    expect(info.judgedThrough).toBe(judgedThrough);
    expect(info.startOffsets.map((entry) => entry.offset).reduce((a, b) => a + b, 0)).toBe(
      committedTotal,
    );
    const secondRun = new JudgingPipeline(second, windowMs, latenessMs, info.judgedThrough);
    await second.decodeInto(secondRun);
    secondRun.windows.closeAll();
    await second.close();
    expect(secondRun.windows.totals.lateRecords).toBe(0);

    // The replayed stretch was really replayed: both runs together read more than the topic.
    expect(first.stats.messages + second.stats.messages).toBeGreaterThan(records.length);
    expect(mergeRuns(firstRun.judged, secondRun.judged)).toEqual(
      expectedWindows(records, windowMs),
    );
  });

  it('skips the messages a rebalance replays, keeping per-window totals exact', async () => {
    const topic = await topics.fresh('rebalance', 4);
    const groupId = `shardwise-e2e-rebalance-${Date.now()}`;
    const records = countRecords(base, 60, 40, 16); // 2400 records, 6 windows
    const firstPart = records.filter((record) => record.ts < base + 35_000);
    const secondPart = records.filter((record) => record.ts >= base + 35_000);
    await produceMessages(topic, messagesOf(firstPart));

    const events = new EventLog();
    const source = new KafkaSource(
      sourceOptions(topic, { groupId, onEvent: events.listener, ...live }),
    );
    const pipeline = new JudgingPipeline(source, windowMs, latenessMs);
    const reading = source.decodeInto(pipeline);
    try {
      await waitFor(() => pipeline.records === firstPart.length, 'the first part to be counted');
      // Let a commit land: it stops below the records of the still-open windows.
      await waitFor(() => source.stats.commits > 0, 'a commit');

      // A second member joins: the group rebalances and our source gives partitions away.
      const intruder = new Kafka({ brokers: brokerList(), logLevel: logLevel.NOTHING }).consumer({
        groupId,
        sessionTimeout: 10_000,
        heartbeatInterval: 1000,
        maxWaitTimeInMs: 100,
      });
      await intruder.connect();
      await intruder.subscribe({ topics: [topic] });
      await intruder.run({ autoCommit: false, eachBatch: async () => undefined });
      await waitFor(
        () => events.of('group-joined').some((event) => event.partitions.length < 4),
        'the source to give partitions away',
      );
      await intruder.disconnect();
      await waitFor(
        () => events.of('group-joined').at(-1)?.partitions.length === 4,
        'the source to take every partition back',
      );
      await waitFor(() => source.stats.redeliveriesSkipped > 0, 'replayed messages to be skipped');

      await produceMessages(topic, messagesOf(secondPart), steadyRequest);
      await waitFor(() => pipeline.records === records.length, 'every record to be counted');
    } finally {
      await source.close();
    }
    await reading;
    pipeline.windows.closeAll();

    expect(events.of('rebalancing').length).toBeGreaterThan(0);
    expect(pipeline.windows.totals.lateRecords).toBe(0);
    expect(pipeline.records).toBe(records.length);
    expect(mergeRuns(pipeline.judged)).toEqual(expectedWindows(records, windowMs));
  });
});
