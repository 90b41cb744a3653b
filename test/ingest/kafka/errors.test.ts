import { describe, expect, it } from 'vitest';
import { ShardwiseError } from '../../../src/errors/shardwise-error.js';
import {
  BrokersUnreachableError,
  KafkaIngestError,
  KafkaPartitionError,
  KafkaTopicError,
  causeText,
  isRetriable,
  isRetriableConnectError,
} from '../../../src/ingest/kafka/errors.js';

/** An error as the Kafka client makes them: a name, a retriable flag, a cause. */
const clientError = (name: string, message: string, retriable: boolean, cause?: unknown) =>
  Object.assign(new Error(message, { cause }), { name, retriable });

describe('the Kafka errors', () => {
  it('unreachable brokers: the addresses, the option, attempts and time, the innermost cause', () => {
    const cause = clientError(
      'KafkaJSNumberOfRetriesExceeded',
      'retries exceeded',
      false,
      clientError('KafkaJSConnectionError', 'Connection refused', true),
    );
    const error = new BrokersUnreachableError(['h1:9092', 'h2:9092'], 1, 1234, cause);
    expect(error.message).toBe(
      'cannot reach the Kafka brokers h1:9092,h2:9092 (--brokers) after 1 attempt over 1.2 s: Connection refused',
    );
    expect(new BrokersUnreachableError(['h:1'], 3, 10_000, cause).message).toContain(
      'after 3 attempts over 10.0 s',
    );
    expect([error.retriable, error.attempts, error.brokers, error.cause]).toEqual([
      true,
      1,
      ['h1:9092', 'h2:9092'],
      cause,
    ]);
    expect(error).toBeInstanceOf(KafkaIngestError);
    expect(error).toBeInstanceOf(ShardwiseError);
  });

  it('topic and partition errors keep what is at fault; not retriable unless said', () => {
    const error = new KafkaPartitionError('requests', 3, 'cannot commit partition 3 of requests');
    expect([error.name, error.topic, error.partition, error.retriable]).toEqual([
      'KafkaPartitionError',
      'requests',
      3,
      false,
    ]);
    expect(error).toBeInstanceOf(KafkaTopicError);
    expect(new KafkaTopicError('t', 'x', { retriable: true }).retriable).toBe(true);
  });
});

describe('isRetriable and isRetriableConnectError', () => {
  it('the innermost cause decides: a refused connection inside "retries exceeded" is retriable', () => {
    const wrapped = clientError(
      'KafkaJSNumberOfRetriesExceeded',
      'retries exceeded',
      false,
      clientError('KafkaJSConnectionError', 'Connection refused', true),
    );
    expect(isRetriable(wrapped)).toBe(true);
    expect(isRetriable(clientError('KafkaJSProtocolError', 'not authorized', false))).toBe(false);
  });

  it('a missing group coordinator is transient whatever its flag says', () => {
    expect(
      isRetriable(clientError('KafkaJSGroupCoordinatorNotFound', 'no coordinator', false)),
    ).toBe(true);
  });

  it('errors without the flag (ours, programming errors) are not retried', () => {
    expect(isRetriable(new TypeError('x is undefined'))).toBe(false);
    expect(isRetriable(null)).toBe(false);
    expect(isRetriable('text')).toBe(false);
  });

  it('our own errors say themselves whether to try again', () => {
    expect(isRetriableConnectError(new KafkaIngestError('x', { retriable: true }))).toBe(true);
    expect(
      isRetriableConnectError(
        new KafkaIngestError('x', {
          retriable: false,
          cause: clientError('KafkaJSConnectionError', 'refused', true),
        }),
      ),
    ).toBe(false);
  });
});

describe('causeText', () => {
  it('the innermost message of the chain; a cycle ends it; nothing known says so', () => {
    const inner = new Error('getaddrinfo ENOTFOUND kafka-1');
    expect(causeText(new Error('outer', { cause: new Error('middle', { cause: inner }) }))).toBe(
      'getaddrinfo ENOTFOUND kafka-1',
    );
    const cyclic = new Error('loop') as Error & { cause?: unknown };
    cyclic.cause = cyclic;
    expect(causeText(cyclic)).toBe('loop');
    expect(causeText(new Error(''))).toBe('unknown error');
    expect(causeText('plain text')).toBe('plain text');
  });
});
