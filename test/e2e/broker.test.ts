// The test broker works for kafkajs and for an independent client: messages that kafkajs
// produces (keys, values, timestamps, partitions) come back unchanged through Debian's kcat.
import { execFile } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { Kafka, Partitioners, logLevel } from 'kafkajs';
import { describe, it, expect } from 'vitest';
import { MISSING_BROKER_MESSAGE, brokerAddress, brokerList } from './kafka-env.js';
import { createTopicsReady } from './kafka-fixtures.js';

const run = promisify(execFile);

interface KcatRecord {
  topic: string;
  partition: number;
  offset: number;
  tstype: string;
  ts: number;
  key: string | null;
  payload: string | null;
}

async function readWithKcat(bootstrap: string, topic: string): Promise<KcatRecord[]> {
  try {
    const { stdout } = await run(
      'kcat',
      ['-C', '-b', bootstrap, '-t', topic, '-o', 'beginning', '-J', '-e', '-q'],
      { timeout: 30_000 },
    );
    return stdout
      .split('\n')
      .filter((line) => line.trim() !== '')
      .map((line) => JSON.parse(line) as KcatRecord);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code === 'ENOENT') {
      throw new Error(
        "kcat is not on PATH; npm test's pretest step (scripts/provision.sh) installs Debian's kcat",
        { cause: error },
      );
    }
    throw error;
  }
}

describe('brokerAddress', () => {
  it('fails loudly, naming what is missing, when there is neither KAFKA_BROKERS nor a bootstrap file', () => {
    const emptyState = mkdtempSync(join(tmpdir(), 'shardwise-no-broker-'));
    const env = { HOME: emptyState, SHARDWISE_BROKER_DIR: emptyState };
    expect(() => brokerAddress(env)).toThrow(MISSING_BROKER_MESSAGE);
    expect(() => brokerAddress(env)).toThrow(join(emptyState, 'bootstrap'));
  });

  it('prefers KAFKA_BROKERS over the bootstrap file, and rejects a malformed value by name', () => {
    const state = mkdtempSync(join(tmpdir(), 'shardwise-broker-'));
    writeFileSync(join(state, 'bootstrap'), '127.0.0.1:19092\n');
    expect(brokerAddress({ SHARDWISE_BROKER_DIR: state })).toBe('127.0.0.1:19092');
    expect(brokerAddress({ SHARDWISE_BROKER_DIR: state, KAFKA_BROKERS: 'a:1, b:2' })).toBe(
      'a:1,b:2',
    );
    expect(() => brokerAddress({ KAFKA_BROKERS: 'localhost' })).toThrow(
      "KAFKA_BROKERS is 'localhost', which is not a comma-separated list of host:port",
    );
  });
});

describe('test broker', () => {
  it('hands messages produced with kafkajs to kcat unchanged', async () => {
    const bootstrap = brokerAddress();
    const kafka = new Kafka({
      clientId: 'shardwise-e2e-broker',
      brokers: brokerList(),
      logLevel: logLevel.WARN,
    });
    const topic = `shardwise-e2e-broker-${randomUUID()}`;
    const admin = kafka.admin();
    // Idempotent, as testProducer() explains: a retried request must not write twice.
    const producer = kafka.producer({
      createPartitioner: Partitioners.DefaultPartitioner,
      idempotent: true,
      maxInFlightRequests: 1,
    });
    await admin.connect();
    try {
      await createTopicsReady(admin, [{ topic, numPartitions: 2 }]);

      // Timestamps from 2023 on purpose: the broker must keep old event times as given.
      const sent = Array.from({ length: 6 }, (_, i) => ({
        key: `shard-${i % 3}`,
        value: JSON.stringify({ shard: `shard-${i % 3}`, count: i + 1 }),
        timestamp: String(1_700_000_000_000 + i * 1000),
      }));
      await producer.connect();
      const metadata = await producer.send({ topic, messages: sent, acks: -1 });
      expect(metadata.length).toBeGreaterThan(0);
      expect(metadata.map((partition) => partition.errorCode)).toEqual(metadata.map(() => 0));

      const received = await readWithKcat(bootstrap, topic);
      expect(received).toHaveLength(sent.length);
      for (const record of received) {
        expect(record.topic).toBe(topic);
        expect(record.tstype).toBe('create');
      }
      const byTimestamp = [...received].sort((a, b) => a.ts - b.ts);
      expect(
        byTimestamp.map((record) => ({
          key: record.key,
          value: record.payload,
          timestamp: String(record.ts),
        })),
      ).toEqual(sent);

      // The default partitioner hashes keys: one key, one partition; offsets dense per partition.
      const partitionOfKey = new Map<string | null, number>();
      for (const record of received) {
        const seen = partitionOfKey.get(record.key);
        expect(seen === undefined || seen === record.partition).toBe(true);
        partitionOfKey.set(record.key, record.partition);
      }
      for (const partition of [0, 1]) {
        const offsets = received
          .filter((record) => record.partition === partition)
          .map((record) => record.offset)
          .sort((a, b) => a - b);
        expect(offsets).toEqual(offsets.map((_, i) => i));
      }
    } finally {
      await producer.disconnect();
      await admin.deleteTopics({ topics: [topic] }).catch(() => undefined);
      await admin.disconnect();
    }
  });
});
