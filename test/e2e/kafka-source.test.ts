// The Kafka source against the real test broker: what it yields for messages written by
// kafkajs and by kcat equals what the file source yields for the same lines; --from a time,
// malformed messages, the message timestamp fallback, the shard sources, and the errors
// when brokers or topic are missing.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { FileSource } from '../../src/ingest/file-source.js';
import { BrokersUnreachableError, KafkaTopicError } from '../../src/ingest/kafka/errors.js';
import { KafkaSource } from '../../src/ingest/kafka/source.js';
import { isRejection, type CountRecord } from '../../src/window/count-record.js';
import {
  CollectingSink,
  EventLog,
  TopicPool,
  produceMessages,
  produceWithKcat,
  sourceOptions,
} from './kafka-fixtures.js';

const topics = new TopicPool();
afterAll(() => topics.cleanUp());

const base = Date.UTC(2025, 11, 1, 10, 0, 0);

/**
 * Lines of every record kind, in the byte layouts the fast scanner takes and the ones it
 * hands to JSON.parse, plus lines each rejection reason stands for. Every line has a ts
 * (a Kafka record without one takes the message timestamp, a file line is rejected).
 */
function mixedLines(): string[] {
  const lines: string[] = [];
  for (let i = 0; i < 120; i++) {
    const ts = base + i * 250;
    lines.push(`{"ts":${ts},"shard":"s-${i % 7}","count":${i % 5}}`);
    if (i % 10 === 0)
      lines.push(`{"ts":"${new Date(ts).toISOString()}","counts":{"s-1":3,"s-2":4}}`);
    if (i % 6 === 0) lines.push(`{"ts":${ts},"shard":"s-${i % 3}","key":"order:${i}"}`);
    if (i % 15 === 0) lines.push(`{ "count": 2, "shard": "s-é${i % 2}", "ts": ${ts} }`);
  }
  lines.push('this is not json');
  lines.push('[1,2,3]');
  lines.push(`{"ts":${base},"shard":"s-1","count":-4}`);
  lines.push(`{"ts":${base},"shard":"s-1","count":1.5}`);
  lines.push(`{"ts":${base},"count":3}`);
  lines.push(`{"ts":"yesterday","shard":"s-1","count":3}`);
  lines.push(`{"ts":${base},"shard":"s-1","count":"3"}`);
  lines.push(`{"ts":${base},"shard":"${'x'.repeat(201)}","count":1}`);
  return lines;
}

async function readFile(lines: string[]): Promise<CollectingSink> {
  const directory = mkdtempSync(join(tmpdir(), 'shardwise-kafka-file-'));
  try {
    const path = join(directory, 'records.jsonl');
    writeFileSync(path, lines.join('\n') + '\n');
    const sink = new CollectingSink();
    await new FileSource(path).decodeInto(sink);
    return sink;
  } finally {
    rmSync(directory, { recursive: true, force: true });
  }
}

async function readTopic(
  topic: string,
  extra: Parameters<typeof sourceOptions>[1] = {},
): Promise<{ sink: CollectingSink; source: KafkaSource; events: EventLog }> {
  const events = new EventLog();
  const source = new KafkaSource(
    sourceOptions(topic, { stopAtEnd: true, onEvent: events.listener, ...extra }),
  );
  const sink = new CollectingSink();
  try {
    await source.decodeInto(sink);
  } finally {
    await source.close();
  }
  return { sink, source, events };
}

describe('KafkaSource on the test broker', () => {
  it('yields for messages written by kafkajs and by kcat what FileSource yields for the same lines', async () => {
    const lines = mixedLines();
    const fromFile = await readFile(lines);
    // Sanity of the reference itself: every kind and several reasons occur.
    expect(fromFile.records.length).toBeGreaterThan(150);
    expect(Object.keys(fromFile.rejected).sort()).toEqual(
      [
        'bad timestamp',
        'missing shard',
        'negative count',
        'non-integer count',
        'not JSON',
        'shard id too long',
        'wrong type',
      ].sort(),
    );

    const viaKafkajs = await topics.fresh('kafkajs-vs-file', 3);
    await produceMessages(
      viaKafkajs,
      lines.map((value, index) => ({ key: `k-${index % 11}`, value })),
    );
    const viaKcat = await topics.fresh('kcat-vs-file', 3);
    await produceWithKcat(
      viaKcat,
      lines.map((value, index) => `k-${index % 11}\t${value}`),
    );

    for (const topic of [viaKafkajs, viaKcat]) {
      const { sink, source } = await readTopic(topic);
      expect(sink.sorted()).toEqual(fromFile.sorted());
      expect(sink.rejected).toEqual(fromFile.rejected);
      expect(source.stats.messages).toBe(lines.length);
      expect(source.stats.redeliveriesSkipped).toBe(0);
    }
  });

  it('gives the same items through batches() and async iteration as through decodeInto', async () => {
    const lines = mixedLines();
    const topic = await topics.fresh('iterate', 2);
    await produceMessages(
      topic,
      lines.map((value, index) => ({ key: String(index % 5), value })),
    );
    const { sink: reference } = await readTopic(topic);

    const iterated = new CollectingSink();
    const source = new KafkaSource(sourceOptions(topic, { stopAtEnd: true }));
    try {
      for await (const item of source) {
        if (isRejection(item)) iterated.reject(item.reason);
        else iterated.record(item.ts, item.shard, item.count, (item as CountRecord).key);
      }
    } finally {
      await source.close();
    }
    expect(iterated.sorted()).toEqual(reference.sorted());
    expect(iterated.rejected).toEqual(reference.rejected);
  });

  it('starts at the first message at or after --from <time> in every partition', async () => {
    const topic = await topics.fresh('from-time', 3);
    const start = Date.UTC(2025, 11, 1, 12, 0, 0);
    // 90 messages 1 s apart, Kafka timestamps equal to the record ts, spread over 3 partitions.
    const messages = Array.from({ length: 90 }, (_, i) => ({
      key: `s-${i % 9}`,
      value: `{"ts":${start + i * 1000},"shard":"s-${i % 9}","count":1}`,
      timestamp: String(start + i * 1000),
    }));
    await produceMessages(topic, messages);
    const from = start + 61_500; // between message 61 and 62: the first kept is 62
    const { sink, events } = await readTopic(topic, { from: { kind: 'time', ms: from } });
    const expected = messages.slice(62).map((m) => JSON.parse(m.value).ts as number);
    expect(sink.records.map((r) => r.ts).sort((a, b) => a - b)).toEqual(expected);
    const [positions] = events.of('start-positions');
    expect(positions.resumed).toEqual([]);
    expect(positions.fromOption.map((entry) => entry.partition)).toEqual([0, 1, 2]);
  });

  it('counts malformed messages by reason and keeps every good record around them', async () => {
    const topic = await topics.fresh('malformed', 2);
    const good = Array.from({ length: 200 }, (_, i) => ({
      key: `s-${i % 4}`,
      value: `{"ts":${base + i},"shard":"s-${i % 4}","count":${(i % 3) + 1}}`,
    }));
    const bad = [
      { key: 'a', value: '{"ts":' },
      { key: 'a', value: 'plain text' },
      { key: 'b', value: null },
      { key: 'b', value: `{"ts":${base},"shard":"s-1","count":-1}` },
      { key: 'c', value: `{"ts":${base},"shard":"s-1","count":2.5}` },
      { key: 'c', value: `{"ts":${base},"shard":"","count":2}` },
      { key: 'd', value: `{"ts":${base},"shard":{"id":1},"count":2}` },
      { key: 'd', value: `{"ts":-5,"shard":"s-1","count":2}` },
    ];
    const mixed = good.flatMap((message, i) => (i % 25 === 0 ? [message, bad[i / 25]] : [message]));
    await produceMessages(topic, mixed);
    const { sink } = await readTopic(topic);
    expect(sink.records).toHaveLength(200);
    expect(sink.load).toBe(good.reduce((sum, m) => sum + JSON.parse(m.value as string).count, 0));
    expect(sink.rejected).toEqual({
      'not JSON': 3,
      'negative count': 1,
      'non-integer count': 1,
      'missing shard': 1,
      'wrong type': 1,
      'bad timestamp': 1,
    });
  });

  it('takes the Kafka message timestamp for records without ts, in every record kind', async () => {
    const topic = await topics.fresh('message-ts', 1);
    const stamp = Date.UTC(2025, 11, 2, 8, 30, 0);
    await produceMessages(topic, [
      { value: '{"shard":"s-1","count":4}', timestamp: String(stamp) },
      { value: '{"counts":{"s-2":5}}', timestamp: String(stamp + 1) },
      { value: '{"shard":"s-3","key":"k"}', timestamp: String(stamp + 2) },
      { value: `{"ts":${base},"shard":"s-4","count":1}`, timestamp: String(stamp + 3) },
    ]);
    const { sink } = await readTopic(topic);
    expect(sink.records).toEqual([
      { ts: stamp, shard: 's-1', count: 4 },
      { ts: stamp + 1, shard: 's-2', count: 5 },
      { ts: stamp + 2, shard: 's-3', count: 1, key: 'k' },
      { ts: base, shard: 's-4', count: 1 },
    ]);
  });

  it('takes the shard from the message key, the partition number, or a named field', async () => {
    const topic = await topics.fresh('shard-from', 4);
    const stamp = Date.UTC(2025, 11, 3, 9, 0, 0);
    const messages = Array.from({ length: 40 }, (_, i) => ({
      key: i === 39 ? null : `tenant-${i % 5}`,
      partition: i % 4,
      value: i % 2 === 0 ? `{"ts":${stamp + i},"tenant":"t-${i % 3}","count":2}` : '',
      timestamp: String(stamp + i),
    }));
    await produceMessages(topic, messages);

    const byKey = await readTopic(topic, { shardFrom: { kind: 'key' } });
    // Odd values are empty: one request each at the message time; message 39 has no key.
    expect(byKey.sink.rejected).toEqual({ 'missing shard': 1 });
    expect(byKey.sink.load).toBe(20 * 2 + 19 * 1);
    expect(new Set(byKey.sink.records.map((r) => r.shard))).toEqual(
      new Set(['tenant-0', 'tenant-1', 'tenant-2', 'tenant-3', 'tenant-4']),
    );

    const byPartition = await readTopic(topic, { shardFrom: { kind: 'partition' } });
    // Values are not read: every message is one request to its partition.
    expect(byPartition.sink.rejected).toEqual({});
    expect(byPartition.sink.records).toHaveLength(40);
    for (const partition of ['0', '1', '2', '3']) {
      expect(byPartition.sink.records.filter((r) => r.shard === partition)).toHaveLength(10);
    }
    expect((await byPartition.source.connect()).partitions).toBe(4);

    const byField = await readTopic(topic, { shardFrom: { kind: 'named-field', field: 'tenant' } });
    expect(byField.sink.records).toHaveLength(20);
    expect(byField.sink.rejected).toEqual({ 'not JSON': 20 });
    expect(byField.sink.load).toBe(40);
  });

  it('fails after bounded retries with a message naming the brokers when none is reachable', async () => {
    const events = new EventLog();
    // Port 9 (discard) on loopback: nothing listens, connections are refused at once.
    const source = new KafkaSource(
      sourceOptions('any-topic', {
        brokers: ['127.0.0.1:9', '127.0.0.2:9'],
        connectRetry: { attempts: 4, initialDelayMs: 100, maxDelayMs: 400 },
        connectionTimeoutMs: 500,
        onEvent: events.listener,
      }),
    );
    const started = Date.now();
    const failure = await source.decodeInto(new CollectingSink()).catch((error: unknown) => error);
    const elapsed = Date.now() - started;
    await source.close();
    expect(failure).toBeInstanceOf(BrokersUnreachableError);
    const error = failure as BrokersUnreachableError;
    expect(error.message).toMatch(
      /^cannot reach the Kafka brokers 127\.0\.0\.1:9,127\.0\.0\.2:9 \(--brokers\) after 4 attempts over \d+\.\d s: /,
    );
    expect(error.brokers).toEqual(['127.0.0.1:9', '127.0.0.2:9']);
    expect(error.retriable).toBe(true);
    expect(error.cause).toBeDefined();
    // Three waits between four attempts, each within the jittered cap: 50-100, 100-200, 200-400 ms.
    const delays = events.of('connect-retry').map((event) => event.delayMs);
    expect(delays).toHaveLength(3);
    expect(delays[0]).toBeGreaterThanOrEqual(50);
    expect(delays[0]).toBeLessThanOrEqual(100);
    expect(delays[2]).toBeGreaterThanOrEqual(200);
    expect(delays[2]).toBeLessThanOrEqual(400);
    expect(elapsed).toBeLessThan(20_000);
  });

  it('fails at once with a topic error naming the topic when it does not exist', async () => {
    const source = new KafkaSource(sourceOptions('shardwise-e2e-no-such-topic'));
    const failure = await source.decodeInto(new CollectingSink()).catch((error: unknown) => error);
    await source.close();
    expect(failure).toBeInstanceOf(KafkaTopicError);
    expect((failure as KafkaTopicError).topic).toBe('shardwise-e2e-no-such-topic');
    expect((failure as Error).message).toMatch(
      /^--topic shardwise-e2e-no-such-topic does not exist on /,
    );
  });
});
