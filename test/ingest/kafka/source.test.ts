// The Kafka source without a broker: settings checked when it is built, and a close while
// it is still trying to connect ends the read at once. Port 9 on loopback has no listener,
// so connections are refused immediately (the broker tests are in test/e2e/).
import { describe, expect, it } from 'vitest';
import { KafkaSource, type KafkaSourceOptions } from '../../../src/ingest/kafka/source.js';
import type { KafkaSourceEvent } from '../../../src/ingest/kafka/events.js';
import { UsageError } from '../../../src/errors/usage-error.js';

const nowhere: KafkaSourceOptions = {
  brokers: ['127.0.0.1:9'],
  topic: 'records',
  windows: { windowMs: 10_000 },
  connectionTimeoutMs: 500,
};

describe('KafkaSource settings', () => {
  it('are checked when the source is built, naming the option', () => {
    expect(() => new KafkaSource({ ...nowhere, brokers: [] })).toThrow(UsageError);
    expect(() => new KafkaSource({ ...nowhere, brokers: [] })).toThrow('--brokers');
    expect(() => new KafkaSource({ ...nowhere, topic: '' })).toThrow('--topic: "" is empty');
    expect(
      () => new KafkaSource({ ...nowhere, windows: { windowMs: 10_000, hopMs: 3000 } }),
    ).toThrow('--window: "10000ms" hop 3000 ms does not divide the window length 10000 ms');
    expect(
      () =>
        new KafkaSource({
          ...nowhere,
          connectRetry: { attempts: 0, initialDelayMs: 1, maxDelayMs: 1 },
        }),
    ).toThrow('connectRetry.attempts is 0');
  });

  it('makes a fresh group per run when none is given', () => {
    const first = new KafkaSource(nowhere);
    const second = new KafkaSource(nowhere);
    expect(first.groupId).toMatch(/^shardwise-[0-9a-f-]{36}$/);
    expect(second.groupId).not.toBe(first.groupId);
    expect(new KafkaSource({ ...nowhere, groupId: 'ops' }).groupId).toBe('ops');
  });
});

describe('KafkaSource.close', () => {
  it('ends a read that is still retrying the connection, quietly and at once', async () => {
    const events: KafkaSourceEvent[] = [];
    const source = new KafkaSource({
      ...nowhere,
      connectRetry: { attempts: 50, initialDelayMs: 200, maxDelayMs: 5000 },
      onEvent: (event) => events.push(event),
    });
    const reading = source.decodeInto({ record() {}, reject() {} });
    while (!events.some((event) => event.type === 'connect-retry')) {
      await new Promise((resolve) => setTimeout(resolve, 10));
    }
    const closedAt = Date.now();
    await source.close();
    await expect(reading).resolves.toBeUndefined();
    expect(Date.now() - closedAt).toBeLessThan(2000);
  });

  it('refuses a second reader on the same source', async () => {
    const source = new KafkaSource({
      ...nowhere,
      connectRetry: { attempts: 1, initialDelayMs: 0, maxDelayMs: 0 },
    });
    const first = source.decodeInto({ record() {}, reject() {} }).catch((error: unknown) => error);
    await expect(source.decodeInto({ record() {}, reject() {} })).rejects.toThrow(
      'this Kafka source is already being read (sink); make a new one',
    );
    await first;
    await source.close();
  });
});
