// The stderr lines for source events (what `watch` prints): one readable line each, the
// chatty ones only under --debug. Expected texts are this project's own wording.
import { describe, expect, it } from 'vitest';
import { describeKafkaEvent, type KafkaSourceEvent } from '../../../src/ingest/kafka/events.js';

describe('describeKafkaEvent', () => {
  it('says what happened in one line per event', () => {
    const lines: [KafkaSourceEvent, string][] = [
      [
        { type: 'connect-retry', brokers: 'a:1', failures: 2, delayMs: 400, error: 'ECONNREFUSED' },
        'kafka: cannot reach a:1 (ECONNREFUSED); retry 2 in 400 ms',
      ],
      [{ type: 'rebalancing', groupId: 'g', memberId: 'm' }, 'kafka: group g is rebalancing'],
      [
        { type: 'group-joined', groupId: 'g', memberId: 'm', partitions: [0, 2], durationMs: 12 },
        'kafka: joined group g with partitions 0,2 in 12 ms',
      ],
      [
        {
          type: 'start-positions',
          groupId: 'g',
          resumed: [{ partition: 0, offset: 41 }],
          fromOption: [{ partition: 1, offset: 0 }],
          judgedThrough: Date.UTC(2025, 11, 1, 10, 0, 10),
        },
        'kafka: group g resumes at 0@41, starts at 1@0 (--from), judged through 2025-12-01T10:00:10.000Z',
      ],
      [
        {
          type: 'consumer-crashed',
          error: 'boom',
          retriable: true,
          failures: 1,
          recreateInMs: 250,
        },
        'kafka: consumer crashed (boom); new consumer in 250 ms (failure 1)',
      ],
      [
        { type: 'redelivery-skipped', partition: 3, messages: 17 },
        'kafka: skipped 17 redelivered message(s) on partition 3',
      ],
    ];
    for (const [event, line] of lines) expect(describeKafkaEvent(event)).toBe(line);
  });

  it('keeps commits and client logs for --debug', () => {
    const commit: KafkaSourceEvent = {
      type: 'committed',
      offsets: [{ partition: 0, offset: 5 }],
      judgedThrough: null,
    };
    const log: KafkaSourceEvent = {
      type: 'client-log',
      level: 'error',
      namespace: 'Connection',
      message: 'Connection error',
    };
    expect(describeKafkaEvent(commit)).toBeNull();
    expect(describeKafkaEvent(log)).toBeNull();
    expect(describeKafkaEvent(commit, true)).toBe('kafka: committed 0@5, judged through none');
    expect(describeKafkaEvent(log, true)).toBe('kafka client error [Connection]: Connection error');
  });
});
