// SASL and TLS against a real broker (a second node with SASL PLAIN, SCRAM-SHA-256 and
// SCRAM-SHA-512 on a plaintext and a TLS listener): settings made by the CLI option parser
// from argv plus the password in the environment, as `watch` and `simulate` will make them.
// A wrong password fails at once and never shows in the message; a certificate the client
// does not trust fails after the bounded retries.
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  kafkaSourceOptionSpec,
  parseKafkaSource,
  saslPasswordVariable,
} from '../../src/cli/kafka-options.js';
import { BrokersUnreachableError, KafkaIngestError } from '../../src/ingest/kafka/errors.js';
import { produceToKafka } from '../../src/ingest/kafka/sink.js';
import { KafkaSource, type KafkaSourceOptions } from '../../src/ingest/kafka/source.js';
import type { CountRecord } from '../../src/window/count-record.js';
import { CollectingSink, createTopicsReady, EventLog } from './kafka-fixtures.js';
import { SecureBroker, secureUsers } from './kafka-secure-broker.js';

let broker: SecureBroker;
const topic = 'shardwise-e2e-secure';
const records: CountRecord[] = Array.from({ length: 300 }, (_, i) => ({
  ts: Date.UTC(2025, 11, 6, 10, 0, 0) + i * 100,
  shard: `s-${i % 6}`,
  count: (i % 4) + 1,
}));

beforeAll(async () => {
  broker = await SecureBroker.start();
  const admin = broker.adminClient().admin();
  await admin.connect();
  await createTopicsReady(admin, [{ topic, numPartitions: 2 }]);
  await admin.disconnect();
}, 120_000);

afterAll(async () => {
  await broker?.stop();
});

/** What `watch` would build from this command line and environment. */
function fromCommandLine(argv: string[], env: NodeJS.ProcessEnv): KafkaSourceOptions {
  const values = parseArgs({ args: argv, options: kafkaSourceOptionSpec, strict: true }).values;
  const parsed = parseKafkaSource(values, { env });
  return {
    ...parsed.connection,
    topic: parsed.topic,
    from: parsed.from,
    shardFrom: parsed.shardFrom,
    windows: { windowMs: 10_000 },
    stopAtEnd: true,
    maxWaitTimeMs: 100,
    connectRetry: { attempts: 3, initialDelayMs: 100, maxDelayMs: 300 },
  };
}

async function readAll(options: KafkaSourceOptions): Promise<CollectingSink> {
  const sink = new CollectingSink();
  const source = new KafkaSource(options);
  try {
    await source.decodeInto(sink);
  } finally {
    await source.close();
  }
  return sink;
}

const expected = () => records.map((record) => JSON.stringify(record)).sort();

describe('Kafka security on a SASL and TLS broker', () => {
  it('writes with SCRAM-SHA-256 and reads with PLAIN, passwords from the environment', async () => {
    const producer = fromCommandLine(
      [
        '--brokers',
        broker.saslPlaintext,
        '--topic',
        topic,
        '--sasl-mechanism',
        'scram-sha-256',
        '--sasl-username',
        secureUsers['scram-sha-256'].username,
      ],
      { [saslPasswordVariable]: secureUsers['scram-sha-256'].password },
    );
    const sent = await produceToKafka(records, { ...producer, batchSize: 100 });
    expect(sent.records).toBe(records.length);

    const sink = await readAll(
      fromCommandLine(
        [
          '--brokers',
          broker.saslPlaintext,
          '--topic',
          topic,
          '--from',
          'earliest',
          '--sasl-mechanism',
          'plain',
          '--sasl-username',
          secureUsers.plain.username,
        ],
        { [saslPasswordVariable]: secureUsers.plain.password },
      ),
    );
    expect(sink.sorted()).toEqual(expected());
  });

  it('reads over TLS trusting --tls-ca, with SCRAM-SHA-512 and the password from a file', async () => {
    const directory = mkdtempSync(join(tmpdir(), 'shardwise-secure-'));
    const passwordFile = join(directory, 'password');
    writeFileSync(passwordFile, `${secureUsers['scram-sha-512'].password}\n`, { mode: 0o600 });
    const sink = await readAll(
      fromCommandLine(
        [
          '--brokers',
          broker.saslTls,
          '--topic',
          topic,
          '--from',
          'earliest',
          '--tls-ca',
          broker.caFile,
          '--sasl-mechanism',
          'scram-sha-512',
          '--sasl-username',
          secureUsers['scram-sha-512'].username,
          '--sasl-password-file',
          passwordFile,
        ],
        {},
      ),
    );
    expect(sink.sorted()).toEqual(expected());
  });

  it('fails at once on a wrong password, naming the brokers and never the password', async () => {
    const events = new EventLog();
    const wrong = 'definitely-not-the-password';
    const source = new KafkaSource({
      ...fromCommandLine(
        [
          '--brokers',
          broker.saslPlaintext,
          '--topic',
          topic,
          '--sasl-mechanism',
          'scram-sha-256',
          '--sasl-username',
          secureUsers['scram-sha-256'].username,
        ],
        { [saslPasswordVariable]: wrong },
      ),
      onEvent: events.listener,
    });
    const failure = await source.decodeInto(new CollectingSink()).catch((error: unknown) => error);
    await source.close();
    expect(failure).toBeInstanceOf(KafkaIngestError);
    const message = (failure as Error).message;
    expect(message).toContain(broker.saslPlaintext);
    expect(message).toMatch(/SASL SCRAM SHA256 authentication failed/);
    expect(message).not.toContain(wrong);
    expect((failure as KafkaIngestError).retriable).toBe(false);
    expect(events.of('connect-retry')).toEqual([]);
    expect(JSON.stringify(events.events)).not.toContain(wrong);
  });

  it('refuses a TLS listener whose certificate is not trusted, after the bounded retries', async () => {
    const events = new EventLog();
    const source = new KafkaSource({
      ...fromCommandLine(
        [
          '--brokers',
          broker.saslTls,
          '--topic',
          topic,
          '--tls',
          '--sasl-mechanism',
          'plain',
          '--sasl-username',
          secureUsers.plain.username,
        ],
        { [saslPasswordVariable]: secureUsers.plain.password },
      ),
      onEvent: events.listener,
    });
    const failure = await source.decodeInto(new CollectingSink()).catch((error: unknown) => error);
    await source.close();
    expect(failure).toBeInstanceOf(BrokersUnreachableError);
    expect((failure as Error).message).toContain(broker.saslTls);
    expect((failure as Error).message).toMatch(/certificate/);
    expect(events.of('connect-retry')).toHaveLength(2);
  });
});
