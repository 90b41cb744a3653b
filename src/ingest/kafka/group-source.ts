import type { Consumer, EachBatchPayload, Kafka } from 'kafkajs';
import type { RejectionReason } from '../../window/count-record.js';
import { UsageError } from '../../errors/usage-error.js';
import type { RecordSink } from '../decode.js';
import type { SourceItem } from '../file-source.js';
import { createKafkaClient, subscribeToTopic, type KafkaConnectionOptions } from './connection.js';
import { causeText, KafkaIngestError } from './errors.js';
import { BatchHandoff } from './batch-handoff.js';
import { KafkaMessageDecoder, type ShardFrom } from './message-decoder.js';
import { partitionCount } from './topic-metadata.js';
import { commitMetadata, judgedThroughFromMetadata, PartitionLedger } from './offset-ledger.js';

/** What a group source reports while it runs. */
export type GroupSourceEvent =
  | { readonly type: 'joined'; readonly epoch: number; readonly partitions: readonly number[] }
  /**
   * A partition of this join delivers its first batch: it is read from `offset` (the
   * group's commit, else where `--from` put the client), and its windows through
   * `judgedThrough` were published by whoever held it before (-Infinity: none).
   */
  | {
      readonly type: 'partition-started';
      readonly epoch: number;
      readonly partition: number;
      readonly offset: number;
      readonly judgedThrough: number;
    }
  | { readonly type: 'commit-failed'; readonly error: string };

/** Settings of a {@link KafkaGroupSource}. */
export interface KafkaGroupSourceOptions extends KafkaConnectionOptions {
  /** `--topic`. */
  readonly topic: string;
  /** `--group`: the consumer group the instances share. */
  readonly groupId: string;
  /** `--from`: where partitions the group has no position for start. */
  readonly from: 'earliest' | 'latest';
  readonly shardFrom: ShardFrom;
  /** Tumbling window length, ms: a message may be committed past once its windows are judged. */
  readonly windowMs: number;
  /** Group session timeout, ms (default 30000). */
  readonly sessionTimeoutMs?: number;
  /** Longest wait of a fetch, ms (default 500). */
  readonly maxWaitTimeMs?: number;
  /** Receives the events; called synchronously, before the batch that follows them. */
  readonly onEvent?: (event: GroupSourceEvent) => void;
}

interface StartedPartition {
  readonly ledger: PartitionLedger;
  /** End of the last window judged (published) for the partition. */
  judged: number;
}

/**
 * A share of a topic's partitions, read as one member of a consumer group that several
 * instances share (`shardwise count`), in batches of records and rejections tagged with
 * partition and offset.
 *
 * Joins. Every join starts the assigned partitions afresh: the epoch rises, the group's
 * commits (offset and judged-through metadata) are read again, and each partition's first
 * batch of the join is preceded by a `partition-started` event. What this member knew of a
 * partition before may be stale: another member may have held it meanwhile.
 *
 * One batch at a time. The consumer's batch callback hands a batch over and returns only
 * when the reader asks for the next one, so nothing fetched before a join is fed after it
 * and the events above always fall between batches.
 *
 * Offsets. Per partition, {@link markJudgedUpTo} says through which window end the
 * partition is judged (for count: published and acknowledged); the source then commits
 * the lowest offset of a message fed to a window still open (see {@link PartitionLedger}),
 * with that end in the commit metadata. Partitions not held in the current join are never
 * committed.
 */
export class KafkaGroupSource {
  private readonly options: KafkaGroupSourceOptions;
  private readonly kafka: Kafka;
  private readonly decoder: KafkaMessageDecoder;
  private readonly handoff = new BatchHandoff(true);
  private readonly started = new Map<number, StartedPartition>();
  private readonly caughtUp = new Map<number, boolean>();
  private readonly collector = new PositionedCollector();
  private positions: Promise<Map<number, { offset: number; through: number }>> | null = null;
  private connecting: Promise<number> | null = null;
  private consumer: Consumer | null = null;
  private epoch = 0;
  private commitChain: Promise<void> = Promise.resolve();
  private closing: Promise<void> | null = null;
  private closed = false;
  private messages = 0;

  constructor(options: KafkaGroupSourceOptions) {
    if (options.brokers.length === 0) {
      throw new UsageError('--brokers', '', 'names no broker (give host:port[,host:port])');
    }
    if (!Number.isSafeInteger(options.windowMs) || options.windowMs <= 0) {
      throw new UsageError('--window', `${options.windowMs}ms`, 'is not a whole number above zero');
    }
    this.options = options;
    this.decoder = new KafkaMessageDecoder(options.shardFrom);
    this.kafka = createKafkaClient(options, () => undefined, 5);
  }

  /** Messages fed. */
  get stats(): { readonly messages: number } {
    return { messages: this.messages };
  }

  /** Reads the topic's partition count (once). */
  connect(): Promise<number> {
    this.connecting ??= partitionCount(this.kafka, this.options.topic, this.options);
    return this.connecting;
  }

  /** Joins the group and yields batches until {@link close}; rejects when the consumer stops. */
  async *batches(): AsyncGenerator<SourceItem[], void, undefined> {
    try {
      await this.connect();
      if (this.closed) return;
      await this.startConsumer();
      for (;;) {
        const items = await this.handoff.take();
        if (items === null) return;
        yield items;
      }
    } finally {
      await this.close();
    }
  }

  /** True while the partition's last batch did not reach the end of the partition. */
  backlogged(partition: number): boolean {
    return this.caughtUp.get(partition) === false;
  }

  /**
   * The partition's windows ending at or before `windowEnd` are judged: commits below its
   * first message still fed to an open window. Ignored for partitions not held now.
   */
  markJudgedUpTo(windowEnd: number, partition: number): void {
    const state = this.started.get(partition);
    if (state === undefined || windowEnd <= state.judged) return;
    state.judged = windowEnd;
    this.commitSoon(partition, state);
  }

  /** Stops reading, waits for the commits asked for, leaves the group. Idempotent. */
  close(): Promise<void> {
    this.closing ??= (async () => {
      this.closed = true;
      this.handoff.end();
      await this.commitChain;
      await this.consumer?.disconnect().catch(() => undefined);
    })();
    return this.closing;
  }

  private commitSoon(partition: number, state: StartedPartition): void {
    const epoch = this.epoch;
    this.commitChain = this.commitChain.then(() => this.commit(partition, state, epoch));
  }

  private async commit(partition: number, state: StartedPartition, epoch: number): Promise<void> {
    const consumer = this.consumer;
    if (consumer === null || epoch !== this.epoch || this.started.get(partition) !== state) return;
    const offset = state.ledger.commitOffset(state.judged);
    try {
      await consumer.commitOffsets([
        {
          topic: this.options.topic,
          partition,
          offset: String(offset),
          metadata: commitMetadata(state.judged),
        },
      ]);
    } catch (error) {
      // A rebalance took the partition: its next owner publishes the same windows again.
      this.emit({ type: 'commit-failed', error: causeText(error) });
    }
  }

  private async startConsumer(): Promise<void> {
    const sessionTimeout = this.options.sessionTimeoutMs ?? 30_000;
    const consumer = this.kafka.consumer({
      groupId: this.options.groupId,
      sessionTimeout,
      heartbeatInterval: Math.max(500, Math.floor(sessionTimeout / 10)),
      maxWaitTimeInMs: this.options.maxWaitTimeMs ?? 500,
      allowAutoTopicCreation: false,
    });
    this.consumer = consumer;
    consumer.on(consumer.events.GROUP_JOIN, ({ payload }) => {
      this.epoch++;
      this.started.clear();
      this.caughtUp.clear();
      this.positions = null;
      const partitions = [...(payload.memberAssignment[this.options.topic] ?? [])].sort(
        (a, b) => a - b,
      );
      this.emit({ type: 'joined', epoch: this.epoch, partitions });
    });
    consumer.on(consumer.events.CRASH, ({ payload }) => {
      if (payload.restart) return;
      this.handoff.fail(
        new KafkaIngestError(
          `the counting consumer of --topic ${this.options.topic} stopped: ${causeText(payload.error)}`,
          { cause: payload.error },
        ),
      );
    });
    await subscribeToTopic(consumer, this.options.topic, this.options.from);
    await consumer.run({
      autoCommit: false,
      partitionsConsumedConcurrently: 1,
      eachBatch: (payload) => this.handleBatch(payload),
    });
  }

  private async handleBatch(payload: EachBatchPayload): Promise<void> {
    const { batch } = payload;
    if (this.closed || batch.messages.length === 0) return;
    const epoch = this.epoch;
    const partition = batch.partition;
    let state = this.started.get(partition);
    if (state === undefined) {
      const start = (await this.committedPositions()).get(partition);
      if (epoch !== this.epoch || this.closed) return;
      const offset = start?.offset ?? Number(batch.messages[0].offset);
      const judgedThrough = start?.through ?? Number.NEGATIVE_INFINITY;
      const ledger = new PartitionLedger();
      ledger.startAt(offset);
      state = { ledger, judged: judgedThrough };
      this.started.set(partition, state);
      this.emit({ type: 'partition-started', epoch, partition, offset, judgedThrough });
    }
    this.caughtUp.set(partition, Number(batch.lastOffset()) + 1 >= Number(batch.highWatermark));
    const collector = this.collector;
    collector.begin(partition, this.options.windowMs);
    for (const message of batch.messages) {
      const offset = Number(message.offset);
      if (state.ledger.isDuplicate(offset)) continue;
      collector.startMessage(offset);
      this.decoder.decode(
        message.value,
        message.key,
        partition,
        Number(message.timestamp),
        collector,
      );
    }
    const { items, offsets, releases } = collector.finish();
    if (offsets.length === 0) return;
    const judgedBefore = state.judged;
    if (!(await this.handoff.put(items, payload))) return;
    // Fed whole: from here on these messages count as processed.
    if (epoch !== this.epoch || this.started.get(partition) !== state) return;
    for (let at = 0; at < offsets.length; at++) {
      state.ledger.hold(offsets[at], releases[at], state.judged);
    }
    this.messages += offsets.length;
    // Windows were published while the batch was fed: the commit made then could not yet
    // pass the batch's messages. Commit again, as far as they let it.
    if (state.judged !== judgedBefore) this.commitSoon(partition, state);
    await payload.heartbeat().catch(() => undefined);
  }

  /** The group's committed offsets and judged-through ends, read once per join. */
  private committedPositions(): Promise<Map<number, { offset: number; through: number }>> {
    this.positions ??= (async () => {
      const admin = this.kafka.admin();
      await admin.connect();
      try {
        const [entry] = await admin.fetchOffsets({
          groupId: this.options.groupId,
          topics: [this.options.topic],
        });
        const positions = new Map<number, { offset: number; through: number }>();
        for (const { partition, offset, metadata } of entry?.partitions ?? []) {
          const at = Number(offset);
          if (at >= 0) {
            positions.set(partition, { offset: at, through: judgedThroughFromMetadata(metadata) });
          }
        }
        return positions;
      } finally {
        await admin.disconnect().catch(() => undefined);
      }
    })();
    const pending = this.positions;
    pending.catch(() => {
      if (this.positions === pending) this.positions = null;
    });
    return pending;
  }

  private emit(event: GroupSourceEvent): void {
    try {
      this.options.onEvent?.(event);
    } catch {
      // A listener's failure must not stop the reading.
    }
  }
}

/**
 * Decodes a batch's messages into items tagged with partition and offset, and notes per
 * message the end of the last window its records fall in (-Infinity for a rejection).
 */
class PositionedCollector implements RecordSink {
  private partition = 0;
  private windowMs = 1;
  private offset = 0;
  private items: SourceItem[] = [];
  private offsets: number[] = [];
  private releases: number[] = [];

  begin(partition: number, windowMs: number): void {
    this.partition = partition;
    this.windowMs = windowMs;
    this.items = [];
    this.offsets = [];
    this.releases = [];
  }

  startMessage(offset: number): void {
    this.offset = offset;
    this.offsets.push(offset);
    this.releases.push(Number.NEGATIVE_INFINITY);
  }

  record(ts: number, shard: string, count: number, key: string | undefined): void {
    const partition = this.partition;
    const offset = this.offset;
    this.items.push(
      key === undefined
        ? { ts, shard, count, partition, offset }
        : { ts, shard, count, key, partition, offset },
    );
    const release = Math.floor(ts / this.windowMs) * this.windowMs + this.windowMs;
    const last = this.releases.length - 1;
    if (release > this.releases[last]) this.releases[last] = release;
  }

  reject(reason: RejectionReason): void {
    this.items.push({ reason, partition: this.partition, offset: this.offset });
  }

  finish(): { items: SourceItem[]; offsets: number[]; releases: number[] } {
    return { items: this.items, offsets: this.offsets, releases: this.releases };
  }
}
