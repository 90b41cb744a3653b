// Backoff and the Kafka error tree, without a broker. Delays follow "equal jitter" as
// stated in M. Brooker, "Exponential Backoff And Jitter", AWS Architecture Blog (2015):
// half the capped exponential ceiling fixed, half uniform.
import {
  KafkaJSConnectionError,
  KafkaJSGroupCoordinatorNotFound,
  KafkaJSNumberOfRetriesExceeded,
  KafkaJSNonRetriableError,
} from 'kafkajs';
import { describe, expect, it } from 'vitest';
import {
  BrokersUnreachableError,
  KafkaIngestError,
  KafkaPartitionError,
  KafkaTopicError,
  causeText,
  isRetriable,
} from '../../../src/ingest/kafka/errors.js';
import {
  RetriesExhausted,
  backoffDelay,
  checkBackoffPolicy,
  retryWithBackoff,
} from '../../../src/ingest/kafka/retry.js';

const policy = { attempts: 6, initialDelayMs: 100, maxDelayMs: 1000 };

describe('backoffDelay', () => {
  it('doubles a ceiling up to the cap and draws half of it', () => {
    // Ceilings 100, 200, 400, 800, 1000, 1000 ms.
    expect([1, 2, 3, 4, 5, 6].map((n) => backoffDelay(n, policy, () => 0))).toEqual([
      50, 100, 200, 400, 500, 500,
    ]);
    expect([1, 2, 3, 4, 5, 6].map((n) => backoffDelay(n, policy, () => 0.999999))).toEqual([
      100, 200, 400, 800, 1000, 1000,
    ]);
    expect(backoffDelay(3, policy, () => 0.5)).toBe(300);
  });

  it('rejects a policy with no attempts or delays out of order', () => {
    expect(() =>
      checkBackoffPolicy({ attempts: 0, initialDelayMs: 1, maxDelayMs: 2 }, 'p'),
    ).toThrow('p.attempts is 0');
    expect(() =>
      checkBackoffPolicy({ attempts: 1, initialDelayMs: 5, maxDelayMs: 2 }, 'p'),
    ).toThrow('p delays 5..2 ms');
  });
});

describe('retryWithBackoff', () => {
  const retriable = () => new KafkaJSConnectionError('Connection error: connect ECONNREFUSED');
  const fast = { attempts: 4, initialDelayMs: 1, maxDelayMs: 4 };

  it('retries retriable errors and returns the first success', async () => {
    const delays: number[] = [];
    let calls = 0;
    const result = await retryWithBackoff(
      async (attempt) => {
        calls++;
        if (attempt < 3) throw retriable();
        return 'ok';
      },
      fast,
      { onRetry: (_failures, delay) => delays.push(delay) },
    );
    expect(result).toBe('ok');
    expect(calls).toBe(3);
    expect(delays).toHaveLength(2);
  });

  it('gives up after the attempts with the last error as cause', async () => {
    const failure = await retryWithBackoff(async () => {
      throw retriable();
    }, fast).catch((error: unknown) => error);
    expect(failure).toBeInstanceOf(RetriesExhausted);
    expect((failure as RetriesExhausted).attempts).toBe(4);
    expect((failure as Error).cause).toBeInstanceOf(KafkaJSConnectionError);
  });

  it('throws a non-retriable error at once', async () => {
    let calls = 0;
    const failure = await retryWithBackoff(async () => {
      calls++;
      throw new KafkaJSNonRetriableError('SASL SCRAM SHA256 authentication failed');
    }, fast).catch((error: unknown) => error);
    expect(calls).toBe(1);
    expect(failure).toBeInstanceOf(KafkaJSNonRetriableError);
  });

  it('stops waiting when aborted', async () => {
    const controller = new AbortController();
    const started = Date.now();
    const waiting = retryWithBackoff(
      async () => {
        throw retriable();
      },
      { attempts: 5, initialDelayMs: 10_000, maxDelayMs: 10_000 },
      { signal: controller.signal },
    );
    setTimeout(() => controller.abort(new Error('closed')), 20);
    await expect(waiting).rejects.toThrow();
    expect(Date.now() - started).toBeLessThan(2000);
  });
});

describe('Kafka errors', () => {
  it('judge retriability by the innermost cause, as the client wraps exhausted retries', () => {
    const connection = new KafkaJSConnectionError('refused');
    const exhausted = new KafkaJSNumberOfRetriesExceeded(connection, {
      retryCount: 5,
      retryTime: 100,
    });
    expect(exhausted.retriable).toBe(false);
    expect(isRetriable(exhausted)).toBe(true);
    expect(isRetriable(new KafkaJSNonRetriableError('bad password'))).toBe(false);
    expect(isRetriable(new TypeError('x is undefined'))).toBe(false);
    // Flagged non-retriable by the client, but a new cluster's offsets topic is on its way.
    // (the client's type declarations give this class no constructor arguments)
    const CoordinatorNotFound = KafkaJSGroupCoordinatorNotFound as unknown as new (
      message: string,
    ) => Error;
    expect(isRetriable(new CoordinatorNotFound('Failed to find group coordinator'))).toBe(true);
    expect(causeText(exhausted)).toBe('refused');
  });

  it('carry retriable, cause, brokers, topic and partition', () => {
    const cause = new KafkaJSConnectionError(
      'Connection error: connect ECONNREFUSED 10.0.0.1:9092',
    );
    const unreachable = new BrokersUnreachableError(['10.0.0.1:9092', 'b:9092'], 3, 2500, cause);
    expect(unreachable).toBeInstanceOf(KafkaIngestError);
    expect(unreachable.message).toBe(
      'cannot reach the Kafka brokers 10.0.0.1:9092,b:9092 (--brokers) after 3 attempts over 2.5 s: Connection error: connect ECONNREFUSED 10.0.0.1:9092',
    );
    expect(unreachable.retriable).toBe(true);
    expect(unreachable.cause).toBe(cause);
    const partition = new KafkaPartitionError('orders', 3, 'no start offset for partition 3');
    expect(partition).toBeInstanceOf(KafkaTopicError);
    expect(partition.topic).toBe('orders');
    expect(partition.partition).toBe(3);
    expect(partition.retriable).toBe(false);
  });
});
