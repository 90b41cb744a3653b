import type { Kafka, KafkaMessage } from 'kafkajs';
import { beforeEach, describe, expect, it, vi } from 'vitest';
import type { KafkaSourceEvent } from '../../../src/ingest/kafka/events.js';
import { BrokersUnreachableError, KafkaTopicError } from '../../../src/ingest/kafka/errors.js';
import { GroupCommits } from '../../../src/ingest/kafka/group-commits.js';
import { OffsetLedger } from '../../../src/ingest/kafka/offset-ledger.js';
import { PartitionAlignment } from '../../../src/ingest/kafka/partition-alignment.js';
import { establishStart, type StartTarget } from '../../../src/ingest/kafka/source-start.js';
import { ReleaseTracker } from '../../../src/ingest/kafka/source-sinks.js';

// Fakes of the kafkajs 2.2.4 admin calls made at start (kafkajs docs, "Admin Client":
// fetchTopicMetadata, fetchOffsets with offsets as decimal strings and "-1" for none,
// describeGroups, fetchTopicOffsets, fetchTopicOffsetsByTimestamp), put in place of the
// client connection.ts builds. Expected start positions by hand: a committed offset
// where the group has one, --from for the rest; a partition is a backlog when its start
// is below its end offset.

const broker = {
  committed: [] as { partition: number; offset: string; metadata: string | null }[],
  members: 0,
  ends: [] as { partition: number; high: string; low: string; offset: string }[],
  byTime: [] as { partition: number; offset: string }[],
  failures: [] as Error[],
  metadataFailure: null as Error | null,
  log: [] as string[],
};

vi.mock('../../../src/ingest/kafka/connection.js', async (original) => ({
  ...(await original<typeof import('../../../src/ingest/kafka/connection.js')>()),
  createKafkaClient: () =>
    ({
      admin: () => ({
        connect: async () => {
          broker.log.push('connect');
          const failure = broker.failures.shift();
          if (failure !== undefined) throw failure;
        },
        disconnect: async () => void broker.log.push('disconnect'),
        fetchTopicMetadata: async () => {
          if (broker.metadataFailure !== null) throw broker.metadataFailure;
          return {
            topics: [
              { name: 'seats', partitions: broker.ends.map((e) => ({ partitionId: e.partition })) },
            ],
          };
        },
        fetchOffsets: async () => [{ topic: 'seats', partitions: broker.committed }],
        describeGroups: async () => ({
          groups: [{ members: Array.from({ length: broker.members }, () => ({})) }],
        }),
        fetchTopicOffsets: async () => broker.ends,
        fetchTopicOffsetsByTimestamp: async () => broker.byTime,
      }),
    }) as unknown as Kafka,
}));

beforeEach(() => {
  broker.committed = [];
  broker.members = 0;
  broker.ends = [
    { partition: 0, low: '0', high: '50', offset: '50' },
    { partition: 1, low: '10', high: '10', offset: '10' },
    { partition: 2, low: '0', high: '7', offset: '7' },
  ];
  broker.byTime = [];
  broker.failures = [];
  broker.metadataFailure = null;
  broker.log = [];
});

function target(options: Partial<StartTarget['options']> = {}) {
  const events: KafkaSourceEvent[] = [];
  const ledger = new OffsetLedger({ windowMs: 10_000 });
  const stopped: Map<number, number>[] = [];
  const start: StartTarget = {
    options: {
      brokers: ['127.0.0.1:1'],
      topic: 'seats',
      windows: { windowMs: 10_000 },
      ...options,
    },
    topic: 'seats',
    groupId: 'watchers',
    connectRetry: { attempts: 3, initialDelayMs: 1, maxDelayMs: 2 },
    signal: new AbortController().signal,
    ledger,
    tracker: new ReleaseTracker(ledger),
    commits: new GroupCommits('seats', ledger, true, () => {}),
    alignment: new PartitionAlignment<KafkaMessage>(Infinity, () => 0),
    endOffsets: new Map(),
    stopAtEnd: (pending) => void stopped.push(new Map(pending)),
    emit: (event) => void events.push(event),
  };
  return { start, events, stopped };
}

describe('establishStart', () => {
  it('starts where the group committed, --from elsewhere, and names the backlog partitions', async () => {
    broker.committed = [
      { partition: 0, offset: '20', metadata: 'shardwise judged-through=30000' },
      { partition: 1, offset: '-1', metadata: null },
    ];
    broker.members = 2;
    const { start, events, stopped } = target({ from: { kind: 'earliest' } });
    const info = await establishStart(start);
    expect(info).toEqual({
      topic: 'seats',
      groupId: 'watchers',
      partitions: 3,
      judgedThrough: 30_000,
      startOffsets: [
        { partition: 0, offset: 20 },
        { partition: 1, offset: 10 },
        { partition: 2, offset: 0 },
      ],
      backlogPartitions: [0, 2],
    });
    expect(events.map((e) => e.type)).toEqual(['connected', 'group-busy', 'start-positions']);
    expect(events[1]).toEqual({ type: 'group-busy', groupId: 'watchers', members: 2 });
    // Resumed: the ledger and the tracker skip what the previous run judged.
    expect(start.ledger.judgedThrough).toBe(30_000);
    expect(start.tracker.resumeFloor).toBe(30_000);
    expect(start.ledger.partition(0).isDuplicate(19)).toBe(true);
    expect(start.ledger.partition(0).isDuplicate(20)).toBe(false);
    expect(start.commits.has(0)).toBe(true);
    expect(start.commits.has(2)).toBe(false);
    expect(start.alignment.isBehind(0)).toBe(true);
    expect(start.alignment.isBehind(1)).toBe(false);
    expect(stopped).toEqual([]);
    expect(broker.log.at(-1)).toBe('disconnect');
  });

  it('for a range (--until) reads the end offsets at that time and stops there', async () => {
    broker.byTime = [
      { partition: 0, offset: '30' },
      { partition: 1, offset: '10' },
      { partition: 2, offset: '0' },
    ];
    const { start, stopped } = target({ from: { kind: 'earliest' }, untilMs: 5_000 });
    const info = await establishStart(start);
    expect(info.backlogPartitions).toEqual([0]);
    expect([...start.endOffsets]).toEqual([
      [0, 30],
      [1, 10],
      [2, 0],
    ]);
    expect(stopped).toEqual([new Map([[0, 30]])]);
    expect(info.judgedThrough).toBeNull();
  });

  it('retries a retriable failure, reporting each retry', async () => {
    const refused = Object.assign(new Error('Connection error: connect ECONNREFUSED 127.0.0.1:1'), {
      retriable: true,
      name: 'KafkaJSConnectionError',
    });
    broker.failures = [refused];
    const { start, events } = target();
    const info = await establishStart(start);
    expect(info.startOffsets).toEqual([
      { partition: 0, offset: 50 },
      { partition: 1, offset: 10 },
      { partition: 2, offset: 7 },
    ]);
    expect(events[0]).toMatchObject({ type: 'connect-retry', brokers: '127.0.0.1:1', failures: 1 });
  });

  it('gives up naming the brokers once the attempts are spent', async () => {
    const refused = () =>
      Object.assign(new Error('Connection error: connect ECONNREFUSED 127.0.0.1:1'), {
        retriable: true,
        name: 'KafkaJSConnectionError',
      });
    broker.failures = [refused(), refused(), refused()];
    const { start } = target();
    await expect(establishStart(start)).rejects.toThrow(BrokersUnreachableError);
  });

  it('names a topic that does not exist, and the topic and brokers for other failures', async () => {
    broker.metadataFailure = Object.assign(
      new Error('This server does not host this topic-partition'),
      {
        type: 'UNKNOWN_TOPIC_OR_PARTITION',
      },
    );
    const missing = establishStart(target().start);
    await expect(missing).rejects.toThrow(KafkaTopicError);
    await expect(missing).rejects.toThrow('--topic seats does not exist on 127.0.0.1:1');
    broker.metadataFailure = new Error('wrapped', {
      cause: new Error('Group authorization failed'),
    });
    await expect(establishStart(target().start)).rejects.toThrow(
      'cannot start reading --topic seats from 127.0.0.1:1: Group authorization failed',
    );
  });
});
