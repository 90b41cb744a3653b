// Every error class of the project extends the one root, which carries `retriable` and
// `cause` (DEVELOPERS.md, "Layout": src/errors/). Expected values: the documented contract
// of each class (a usage error is never retriable; unreachable brokers are).
import { describe, expect, it } from 'vitest';
import { ShardwiseError } from '../../src/errors/shardwise-error.js';
import { UsageError } from '../../src/errors/usage-error.js';
import {
  BrokersUnreachableError,
  KafkaIngestError,
  KafkaPartitionError,
  KafkaTopicError,
} from '../../src/ingest/kafka/errors.js';
import { RetriesExhausted } from '../../src/ingest/kafka/retry.js';
import { PrometheusQueryError } from '../../src/ingest/prometheus/prometheus-api.js';
import { PartialSummaryError } from '../../src/partials/partial-summary.js';
import { RecordingFormatError } from '../../src/record/recording-reader.js';

describe('ShardwiseError', () => {
  const cause = new Error('connection refused');
  const errors: [string, Error][] = [
    ['UsageError', new UsageError('--shards', 'x', 'is not a positive whole number')],
    ['KafkaIngestError', new KafkaIngestError('failed')],
    ['BrokersUnreachableError', new BrokersUnreachableError(['h:1'], 3, 1500, cause)],
    ['KafkaTopicError', new KafkaTopicError('t', 'topic t is odd')],
    ['KafkaPartitionError', new KafkaPartitionError('t', 2, 'partition 2 failed')],
    ['RetriesExhausted', new RetriesExhausted(3, 10, cause)],
    ['PrometheusQueryError', new PrometheusQueryError('status', 'answered 500', 500)],
    ['PartialSummaryError', new PartialSummaryError('not JSON')],
    ['RecordingFormatError', new RecordingFormatError('a.jsonl', 'no line is a window')],
  ];

  it.each(errors)('is the root of %s', (_, error) => {
    expect(error).toBeInstanceOf(ShardwiseError);
    expect(error).toBeInstanceOf(Error);
  });

  it('says whether trying again can help, and keeps the cause', () => {
    const usage = new UsageError('--window', '0s', 'is not above zero');
    expect(usage.retriable).toBe(false);
    expect(usage.message).toBe('--window: "0s" is not above zero');
    const unreachable = new BrokersUnreachableError(['h:1'], 3, 1500, cause);
    expect(unreachable.retriable).toBe(true);
    expect(unreachable.cause).toBe(cause);
    expect(new KafkaIngestError('x', { retriable: true }).retriable).toBe(true);
    expect(new KafkaIngestError('x').retriable).toBe(false);
  });
});
