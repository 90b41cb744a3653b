import { randomUUID } from 'node:crypto';
import { afterAll, describe, expect, it } from 'vitest';
import { PartialCounting } from '../../src/cli/partial-counting.js';
import type { GroupSourceEvent } from '../../src/ingest/kafka/group-source.js';
import { kafkaGroupRecordSource } from '../../src/ingest/record-source.js';
import { PartialCountSink, type ClosedWindowParts } from '../../src/partials/partial-count-sink.js';
import { brokerList } from './kafka-env.js';
import { produceMessages, testClient, TopicPool, waitFor } from './kafka-fixtures.js';

// `shardwise count`'s group source on the test broker, through count's own loop.
// Source of truth: window arithmetic by hand (10 s tumbling windows aligned to epoch 0,
// 1 s lateness) and Kafka's rule that a committed offset is the next one a member reads
// (common practice, from the Kafka consumer documentation, from memory).

const t0 = 1_700_000_000_000; // a multiple of 10 000
const topics = new TopicPool();
afterAll(() => topics.cleanUp());

/** One counting member of `groupId` on `topic`: its published windows and its source's events. */
function member(topic: string, groupId: string) {
  const events: GroupSourceEvent[] = [];
  const published: ClosedWindowParts[] = [];
  const sink = new PartialCountSink({ windowMs: 10_000, latenessMs: 1_000, idleMs: 3_600_000 });
  const source = kafkaGroupRecordSource({
    brokers: brokerList(),
    topic,
    groupId,
    from: 'earliest',
    shardFrom: { kind: 'field' },
    windowMs: 10_000,
    sessionTimeoutMs: 6_000,
    maxWaitTimeMs: 100,
    onEvent: (event) => {
      events.push(event);
      if (event.type === 'joined') sink.revokeAll();
      if (event.type === 'partition-started') {
        sink.startPartition(event.partition, event.offset, event.judgedThrough, Date.now());
      }
    },
  });
  const counting = new PartialCounting(source, sink, (windows) => {
    published.push(...windows);
    return Promise.resolve();
  });
  const running = counting.run();
  return { events, published, stop: () => counting.stop(), running };
}

async function committed(groupId: string, topic: string) {
  const admin = testClient().admin();
  await admin.connect();
  try {
    const [entry] = await admin.fetchOffsets({ groupId, topics: [topic] });
    return entry.partitions[0];
  } finally {
    await admin.disconnect();
  }
}

describe('kafkaGroupRecordSource with PartialCounting', () => {
  it('commits, after publishing, up to the first record of the open window, and the next member starts there', async () => {
    const topic = await topics.fresh('group-source', 1);
    const groupId = `shardwise-e2e-${randomUUID().slice(0, 8)}`;
    const line = (ts: number, shard: string) => ({
      value: JSON.stringify({ ts, shard, count: 1 }),
    });
    // Offsets 0-3 in window t0, 4 in window t0+10 s, 5 at t0+25 s: its watermark (t0+24 s)
    // closes the first two windows; offset 5 is the first (only) record of an open window.
    await produceMessages(topic, [
      line(t0 + 1_000, 'a'),
      line(t0 + 2_000, 'b'),
      line(t0 + 3_000, 'a'),
      line(t0 + 9_000, 'a'),
      line(t0 + 12_000, 'b'),
      line(t0 + 25_000, 'c'),
    ]);
    const first = member(topic, groupId);
    await waitFor(() => first.published.length >= 2, 'two windows published', 30_000);
    expect(
      first.published.map((w) => [w.start - t0, w.parts[0].records, w.parts[0].counts]),
    ).toEqual([
      [0, 4, { a: 3, b: 1 }],
      [10_000, 1, { b: 1 }],
    ]);
    let position: Awaited<ReturnType<typeof committed>> | undefined;
    // The commit follows the publication asynchronously: poll for it (10 s at most).
    for (let tries = 0; tries < 50 && position?.offset !== '5'; tries++) {
      position = await committed(groupId, topic);
      if (position.offset !== '5') await new Promise((resolve) => setTimeout(resolve, 200));
    }
    expect(position).toMatchObject({
      offset: '5',
      metadata: `shardwise judged-through=${t0 + 20_000}`,
    });
    await first.stop();
    await first.running;

    // The next member of the group reads from there and knows what was published.
    await produceMessages(topic, [line(t0 + 37_000, 'a')]);
    const second = member(topic, groupId);
    await waitFor(() => second.published.length >= 1, 'the next member publishing', 30_000);
    expect(second.events.find((event) => event.type === 'partition-started')).toMatchObject({
      partition: 0,
      offset: 5,
      judgedThrough: t0 + 20_000,
    });
    expect(second.published[0]).toMatchObject({
      start: t0 + 20_000,
      parts: [{ partition: 0, from: 5, to: 6, records: 1, counts: { c: 1 } }],
    });
    await second.stop();
    await second.running;
  }, 90_000);
});
