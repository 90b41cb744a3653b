import type { Admin, KafkaMessage } from 'kafkajs';
import { brokerText, createKafkaClient, type KafkaClientLog } from './connection.js';
import { causeText, isRetriableConnectError, KafkaIngestError } from './errors.js';
import type { KafkaSourceEvent, PartitionOffset } from './events.js';
import type { GroupCommits } from './group-commits.js';
import { judgedThroughFromMetadata, type OffsetLedger } from './offset-ledger.js';
import type { PartitionAlignment } from './partition-alignment.js';
import { retryWithBackoff, unreachableBrokersError, type BackoffPolicy } from './retry.js';
import type { ReleaseTracker } from './source-sinks.js';
import type { KafkaSourceInfo, KafkaSourceOptions } from './source-types.js';
import { fromOptionOffsets, sourcePartitionCount } from './start-positions.js';

/** What connecting reads from a {@link KafkaSource} and the state it sets up in it. */
export interface StartTarget {
  readonly options: KafkaSourceOptions;
  readonly topic: string;
  readonly groupId: string;
  readonly connectRetry: BackoffPolicy;
  /** Aborted when the source closes: stops the retries. */
  readonly signal: AbortSignal;
  readonly ledger: OffsetLedger;
  readonly tracker: ReleaseTracker;
  readonly commits: GroupCommits;
  readonly alignment: PartitionAlignment<KafkaMessage>;
  /** With `untilMs`: filled with, per partition, the first offset not to read. */
  readonly endOffsets: Map<number, number>;
  /** A bounded read: the end offset of each partition with records left to read. */
  stopAtEnd(pending: Map<number, number>): void;
  emit(event: KafkaSourceEvent): void;
}

/**
 * Connects with a client of its own and reads where each partition starts (committed
 * positions, `--from`, end offsets), retrying with backoff; sets up the target's ledger,
 * alignment and bounded-read ends. Fails with BrokersUnreachableError or KafkaIngestError.
 */
export async function establishStart(target: StartTarget): Promise<KafkaSourceInfo> {
  // A client of its own with no retries: the backoff here is the only one.
  const admin = createKafkaClient(
    target.options,
    (entry: KafkaClientLog) => target.emit({ type: 'client-log', ...entry }),
    0,
  ).admin({ retry: { retries: 0 } });
  const brokers = brokerText(target.options);
  try {
    const info = await retryWithBackoff(() => readStart(admin, target), target.connectRetry, {
      signal: target.signal,
      shouldRetry: isRetriableConnectError,
      onRetry: (failures, delayMs, error) =>
        target.emit({ type: 'connect-retry', brokers, failures, delayMs, error: causeText(error) }),
    });
    if (info.judgedThrough !== null) {
      target.ledger.markJudgedUpTo(info.judgedThrough);
      target.tracker.resumeFloor = info.judgedThrough;
    }
    return info;
  } catch (error) {
    const unreachable = unreachableBrokersError(error, target.options.brokers);
    if (unreachable !== null) throw unreachable;
    if (error instanceof KafkaIngestError || target.signal.aborted) throw error;
    throw new KafkaIngestError(
      `cannot start reading --topic ${target.topic} from ${brokers}: ${causeText(error)}`,
      { cause: error },
    );
  } finally {
    await admin.disconnect().catch(() => undefined);
  }
}

/** One connection attempt: metadata, committed positions, start positions, end offsets. */
async function readStart(admin: Admin, target: StartTarget): Promise<KafkaSourceInfo> {
  const topic = target.topic;
  const groupId = target.groupId;
  await admin.connect();
  const partitions = await sourcePartitionCount(admin, topic, brokerText(target.options));
  target.emit({
    type: 'connected',
    brokers: brokerText(target.options),
    topic,
    partitions,
    groupId,
  });
  const [committed] = await admin.fetchOffsets({ groupId, topics: [topic] });
  const described = await admin.describeGroups([groupId]);
  const members = described.groups[0]?.members.length ?? 0;
  if (members > 0) target.emit({ type: 'group-busy', groupId, members });

  const resumed: PartitionOffset[] = [];
  const missing: number[] = [];
  let judgedThrough = Number.NEGATIVE_INFINITY;
  const committedByPartition = new Map<number, number>();
  for (const entry of committed?.partitions ?? []) {
    const offset = Number(entry.offset);
    if (offset >= 0) {
      resumed.push({ partition: entry.partition, offset });
      committedByPartition.set(entry.partition, offset);
      target.commits.resumed(entry.partition, offset, entry.metadata ?? null);
      judgedThrough = Math.max(judgedThrough, judgedThroughFromMetadata(entry.metadata));
    }
  }
  for (let partition = 0; partition < partitions; partition++) {
    if (!committedByPartition.has(partition)) missing.push(partition);
  }
  const fromOption = await fromOptionOffsets(
    admin,
    topic,
    target.options.from ?? { kind: 'latest' },
    missing,
  );
  const startOffsets = [...resumed, ...fromOption].sort((a, b) => a.partition - b.partition);
  const until = target.options.untilMs;
  const ends =
    until === undefined
      ? (await admin.fetchTopicOffsets(topic)).map((entry) => ({
          partition: entry.partition,
          offset: entry.high,
        }))
      : await admin.fetchTopicOffsetsByTimestamp(topic, until);
  const pending = new Map<number, number>();
  target.endOffsets.clear();
  for (const { partition, offset } of startOffsets) {
    const end = Number(ends.find((entry) => entry.partition === partition)?.offset ?? 0);
    if (until !== undefined) target.endOffsets.set(partition, end);
    if (offset < end) pending.set(partition, end);
  }
  for (const partition of pending.keys()) target.alignment.expect(partition);
  if (target.options.stopAtEnd === true || until !== undefined) target.stopAtEnd(pending);
  // Everything below a partition's start counts as processed: a fetch that starts lower
  // (a rebalance before the start position is committed) is skipped like a redelivery.
  for (const { partition, offset } of startOffsets) {
    target.ledger.partition(partition).startAt(offset);
  }
  const judged = Number.isFinite(judgedThrough) ? judgedThrough : null;
  target.emit({ type: 'start-positions', groupId, resumed, fromOption, judgedThrough: judged });
  return {
    topic,
    groupId,
    partitions,
    judgedThrough: judged,
    startOffsets,
    backlogPartitions: [...pending.keys()].sort((a, b) => a - b),
  };
}
