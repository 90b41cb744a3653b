// Secrets stay hidden: the password wrapper prints as [hidden] everywhere, and a client log
// line that quotes the password reaches the listener with the password cut out.
import { inspect } from 'node:util';
import { describe, expect, it } from 'vitest';
import {
  SecretText,
  createKafkaClient,
  type KafkaClientLog,
} from '../../../src/ingest/kafka/connection.js';

describe('SecretText', () => {
  it('never shows its text by string, JSON, inspection or template', () => {
    const secret = new SecretText('hunter2-correct-horse');
    const holder = { sasl: { username: 'svc', password: secret } };
    expect(String(secret)).toBe('[hidden]');
    expect(`${secret}`).toBe('[hidden]');
    expect(JSON.stringify(holder)).toBe('{"sasl":{"username":"svc","password":"[hidden]"}}');
    expect(inspect(holder, { depth: 5 })).not.toContain('hunter2');
    expect(Object.keys(secret)).toEqual([]);
    expect(secret.reveal()).toBe('hunter2-correct-horse');
  });
});

describe('createKafkaClient', () => {
  it('routes the client log to the listener with the SASL password removed', () => {
    const logs: KafkaClientLog[] = [];
    const kafka = createKafkaClient(
      {
        brokers: ['127.0.0.1:9'],
        sasl: {
          mechanism: 'scram-sha-256',
          username: 'svc',
          password: new SecretText('s3cr3t-pw'),
        },
      },
      (entry) => logs.push(entry),
      0,
    );
    kafka.logger().error('handshake said s3cr3t-pw was wrong', { extra: 's3cr3t-pw' });
    kafka.logger().warn('plain warning');
    kafka.logger().info('info is not passed on');
    expect(logs).toEqual([
      { level: 'error', namespace: '', message: 'handshake said [hidden] was wrong' },
      { level: 'warn', namespace: '', message: 'plain warning' },
    ]);
  });
});
