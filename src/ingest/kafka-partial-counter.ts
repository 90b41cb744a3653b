import { randomUUID } from 'node:crypto';
import {
  Partitioners,
  type Consumer,
  type EachBatchPayload,
  type Kafka,
  type Producer,
} from 'kafkajs';
import { encodePartialSummary, type PartialSummary } from '../partials/partial-summary.js';
import { PartitionCounter, type ClosedPart } from '../partials/partition-counter.js';
import { UsageError } from '../window/errors.js';
import { brokerText, createKafkaClient, type KafkaConnectionOptions } from './kafka-connection.js';
import { causeText, KafkaIngestError, KafkaTopicError } from './kafka-errors.js';
import { KafkaMessageDecoder, type ShardFrom } from './kafka-message-decoder.js';
import { commitMetadata, judgedThroughFromMetadata } from './kafka-offset-ledger.js';

/** What a counting instance reports while it runs. */
export type PartialCounterEvent =
  | { readonly type: 'started'; readonly instance: string; readonly sourcePartitions: number }
  | {
      readonly type: 'joined';
      readonly epoch: number;
      readonly partitions: readonly number[];
    }
  | {
      readonly type: 'published';
      readonly windows: number;
      readonly parts: number;
      readonly committed: readonly { partition: number; offset: number }[];
    }
  | { readonly type: 'commit-failed'; readonly error: string };

/** Settings of a {@link KafkaPartialCounter}. */
export interface PartialCounterOptions extends KafkaConnectionOptions {
  /** `--topic`: the source topic. */
  readonly topic: string;
  /** `--group`: the consumer group the counting instances share. */
  readonly groupId: string;
  /** `--summaries`: the topic partial summaries go to (must exist). */
  readonly summaryTopic: string;
  /** `--from`: where partitions the group has no position for start. */
  readonly from: 'earliest' | 'latest';
  readonly shardFrom: ShardFrom;
  /** `--shard-from` as written, carried in every summary. */
  readonly shardFromText: string;
  readonly windowMs: number;
  readonly latenessMs: number;
  /**
   * A partition that has caught up and brought nothing for this long (wall time, ms)
   * closes its windows on the newest watermark of the instance's other partitions.
   */
  readonly idleMs: number;
  /** Group session timeout, ms (default 30000). */
  readonly sessionTimeoutMs?: number;
  /** Longest wait of a fetch, ms (default 500). */
  readonly maxWaitTimeMs?: number;
  readonly onEvent?: (event: PartialCounterEvent) => void;
}

/** Running counts of an instance. */
export interface PartialCounterStats {
  readonly messages: number;
  readonly summaries: number;
  readonly parts: number;
  readonly commits: number;
}

/**
 * One counting instance (`shardwise count`): a member of a consumer group on the source
 * topic that counts the partitions Kafka assigns it, each on its own watermark
 * ({@link PartitionCounter}), and publishes each closed window's parts as one partial
 * summary to the summary topic.
 *
 * Offsets. A partition's offset is committed only after the summaries holding its closed
 * windows are acknowledged by all in-sync replicas (an idempotent producer, so a retry
 * writes nothing twice), and never past a record of a window still open; the commit
 * metadata says through which window end the partition is published. Whoever gets the
 * partition next (after a rebalance, a crash, a restart) starts from that commit, drops
 * replayed records of published windows, and publishes each later window whole. A crash
 * between publishing and committing makes the new owner publish the same windows again;
 * the judge keeps one part per (window, partition).
 *
 * Rebalances. Every join starts the assigned partitions afresh from their commits: the
 * state of a partition held before may be stale (another member may have had it
 * meanwhile), and the client fetches from the commit anyway.
 */
export class KafkaPartialCounter {
  /** This process's id in the summaries. */
  readonly instance = randomUUID();
  private readonly options: PartialCounterOptions;
  private readonly kafka: Kafka;
  private readonly decoder: KafkaMessageDecoder;
  private readonly counters = new Map<number, PartitionCounter>();
  private readonly caughtUpAt = new Map<number, number>();
  private committed: Promise<Map<number, { offset: number; through: number }>> | null = null;
  private consumer: Consumer | null = null;
  private producer: Producer | null = null;
  private sourcePartitions = 0;
  private epoch = 0;
  private chain: Promise<void> = Promise.resolve();
  private timer: NodeJS.Timeout | null = null;
  private stopped = false;
  private failure: ((error: unknown) => void) | null = null;
  private readonly counts = { messages: 0, summaries: 0, parts: 0, commits: 0 };

  constructor(options: PartialCounterOptions) {
    if (options.brokers.length === 0) {
      throw new UsageError('--brokers', '', 'names no broker (give host:port[,host:port])');
    }
    if (options.summaryTopic === options.topic) {
      throw new UsageError('--summaries', options.summaryTopic, 'must not be the source --topic');
    }
    this.options = options;
    this.decoder = new KafkaMessageDecoder(options.shardFrom);
    this.kafka = createKafkaClient(options, () => undefined, 5);
  }

  get stats(): PartialCounterStats {
    return { ...this.counts };
  }

  /** Connects, joins the group and counts until {@link close}; rejects when it cannot go on. */
  async run(): Promise<void> {
    const admin = this.kafka.admin();
    await admin.connect();
    try {
      this.sourcePartitions = await partitionCount(admin, this.options.topic, this.options);
      await partitionCount(admin, this.options.summaryTopic, this.options);
    } finally {
      await admin.disconnect().catch(() => undefined);
    }
    this.emit({
      type: 'started',
      instance: this.instance,
      sourcePartitions: this.sourcePartitions,
    });
    const producer = this.kafka.producer({
      idempotent: true,
      maxInFlightRequests: 1,
      createPartitioner: Partitioners.DefaultPartitioner,
    });
    this.producer = producer;
    await producer.connect();
    const consumer = this.kafka.consumer({
      groupId: this.options.groupId,
      sessionTimeout: this.options.sessionTimeoutMs ?? 30_000,
      heartbeatInterval: Math.max(500, Math.floor((this.options.sessionTimeoutMs ?? 30_000) / 10)),
      maxWaitTimeInMs: this.options.maxWaitTimeMs ?? 500,
      allowAutoTopicCreation: false,
    });
    this.consumer = consumer;
    consumer.on(consumer.events.GROUP_JOIN, ({ payload }) => {
      this.epoch++;
      this.counters.clear();
      this.caughtUpAt.clear();
      this.committed = null;
      const partitions = [...(payload.memberAssignment[this.options.topic] ?? [])].sort(
        (a, b) => a - b,
      );
      this.emit({ type: 'joined', epoch: this.epoch, partitions });
    });
    const failed = new Promise<void>((_, reject) => {
      this.failure = reject;
    });
    consumer.on(consumer.events.CRASH, ({ payload }) => {
      if (payload.restart) return;
      this.failure?.(
        new KafkaIngestError(
          `the counting consumer of --topic ${this.options.topic} stopped: ${causeText(payload.error)}`,
          { cause: payload.error },
        ),
      );
    });
    await consumer.connect();
    await consumer.subscribe({
      topics: [this.options.topic],
      fromBeginning: this.options.from === 'earliest',
    });
    await consumer.run({
      autoCommit: false,
      partitionsConsumedConcurrently: 1,
      eachBatch: (payload) => this.handleBatch(payload),
    });
    this.timer = setInterval(() => void this.serial(() => this.publishDue()), 250);
    await Promise.race([failed, this.untilStopped()]);
  }

  /** Publishes what is due, commits, leaves the group and disconnects. Idempotent. */
  async close(): Promise<void> {
    if (this.stopped) return;
    this.stopped = true;
    if (this.timer !== null) clearInterval(this.timer);
    await this.chain.catch(() => undefined);
    await this.consumer?.disconnect().catch(() => undefined);
    await this.producer?.disconnect().catch(() => undefined);
    this.stopResolve?.();
  }

  private stopResolve: (() => void) | null = null;

  private untilStopped(): Promise<void> {
    return new Promise((resolve) => {
      this.stopResolve = resolve;
      if (this.stopped) resolve();
    });
  }

  private async handleBatch({ batch, heartbeat }: EachBatchPayload): Promise<void> {
    if (this.stopped || batch.messages.length === 0) return;
    const epoch = this.epoch;
    const partition = batch.partition;
    let counter = this.counters.get(partition);
    if (counter === undefined) {
      const start = (await this.committedPositions()).get(partition);
      if (epoch !== this.epoch) return;
      counter = new PartitionCounter(
        partition,
        { windowMs: this.options.windowMs, latenessMs: this.options.latenessMs },
        start?.offset ?? Number(batch.messages[0].offset),
        start?.through ?? Number.NEGATIVE_INFINITY,
      );
      this.counters.set(partition, counter);
    }
    for (const message of batch.messages) {
      const offset = Number(message.offset);
      if (offset <= counter.highestProcessed) continue;
      counter.offset = offset;
      this.decoder.decode(
        message.value,
        message.key,
        partition,
        Number(message.timestamp),
        counter,
      );
      counter.processed(offset);
      this.counts.messages++;
    }
    if (Number(batch.lastOffset()) + 1 >= Number(batch.highWatermark)) {
      this.caughtUpAt.set(partition, Date.now());
    } else {
      this.caughtUpAt.delete(partition);
    }
    await this.serial(() => this.publishDue());
    await heartbeat().catch(() => undefined);
  }

  /** The group's committed offsets and published-through ends, read once per join. */
  private committedPositions(): Promise<Map<number, { offset: number; through: number }>> {
    this.committed ??= (async () => {
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
          if (at >= 0)
            positions.set(partition, { offset: at, through: judgedThroughFromMetadata(metadata) });
        }
        return positions;
      } finally {
        await admin.disconnect().catch(() => undefined);
      }
    })();
    const pending = this.committed;
    pending.catch(() => {
      if (this.committed === pending) this.committed = null;
    });
    return pending;
  }

  private serial(task: () => Promise<void>): Promise<void> {
    const next = this.chain.then(task, task);
    this.chain = next.catch((error: unknown) => this.failure?.(error));
    return next;
  }

  /** Closes due windows on every partition, publishes them, then commits past them. */
  private async publishDue(): Promise<void> {
    const producer = this.producer;
    const consumer = this.consumer;
    if (producer === null || consumer === null) return;
    const now = Date.now();
    let newest = Number.NEGATIVE_INFINITY;
    for (const counter of this.counters.values()) newest = Math.max(newest, counter.watermark);
    const byWindow = new Map<number, ClosedPart[]>();
    const commits: { partition: number; offset: number; through: number }[] = [];
    for (const [partition, counter] of this.counters) {
      const caughtUp = this.caughtUpAt.get(partition);
      const idle = caughtUp !== undefined && now - caughtUp >= this.options.idleMs;
      const parts = counter.closeDue(idle ? newest : Number.NEGATIVE_INFINITY);
      if (parts.length === 0) continue;
      for (const part of parts) {
        const list = byWindow.get(part.start) ?? [];
        list.push(part);
        byWindow.set(part.start, list);
      }
      commits.push({ partition, offset: counter.commitOffset(), through: counter.closedThrough });
    }
    if (byWindow.size === 0) return;
    const epoch = this.epoch;
    const messages = [...byWindow.entries()]
      .sort(([a], [b]) => a - b)
      .map(([start, parts]) => {
        const summary: PartialSummary = {
          partial: 1,
          instance: this.instance,
          epoch,
          topic: this.options.topic,
          sourcePartitions: this.sourcePartitions,
          windowMs: this.options.windowMs,
          latenessMs: this.options.latenessMs,
          shardFrom: this.options.shardFromText,
          start,
          end: start + this.options.windowMs,
          parts: parts.map(({ start: _start, end: _end, ...part }) => part),
        };
        return { key: String(start), value: encodePartialSummary(summary) };
      });
    await producer.send({ topic: this.options.summaryTopic, acks: -1, messages });
    this.counts.summaries += messages.length;
    const parts = [...byWindow.values()].reduce((sum, list) => sum + list.length, 0);
    this.counts.parts += parts;
    try {
      await consumer.commitOffsets(
        commits.map(({ partition, offset, through }) => ({
          topic: this.options.topic,
          partition,
          offset: String(offset),
          metadata: commitMetadata(through),
        })),
      );
      this.counts.commits++;
    } catch (error) {
      // A rebalance took the partitions: their next owner publishes the same windows again.
      this.emit({ type: 'commit-failed', error: causeText(error) });
    }
    this.emit({
      type: 'published',
      windows: messages.length,
      parts,
      committed: commits.map(({ partition, offset }) => ({ partition, offset })),
    });
  }

  private emit(event: PartialCounterEvent): void {
    try {
      this.options.onEvent?.(event);
    } catch {
      // A listener's failure must not stop the counting.
    }
  }
}

async function partitionCount(
  admin: ReturnType<Kafka['admin']>,
  topic: string,
  options: KafkaConnectionOptions,
): Promise<number> {
  try {
    const { topics } = await admin.fetchTopicMetadata({ topics: [topic] });
    const count = topics[0]?.partitions.length ?? 0;
    if (count === 0) throw new KafkaTopicError(topic, `topic ${topic} has no partitions`);
    return count;
  } catch (error) {
    if (error instanceof KafkaTopicError) throw error;
    throw new KafkaTopicError(
      topic,
      `topic ${topic} cannot be described on ${brokerText(options)}: ${causeText(error)}`,
      { cause: error },
    );
  }
}
