import { randomUUID } from 'node:crypto';
import { itemsOf } from '../batch-items.js';
import type { Consumer, EachBatchPayload, Kafka, KafkaMessage } from 'kafkajs';
import { UsageError } from '../../errors/usage-error.js';
import type { RecordSink } from '../decode.js';
import type { SourceItem } from '../file-source.js';
import { brokerText, createKafkaClient, type KafkaClientLog } from './connection.js';
import { causeText, isRetriable, KafkaIngestError } from './errors.js';
import type { KafkaSourceEvent, KafkaSourceListener } from './events.js';
import { KafkaMessageDecoder, type ShardFrom } from './message-decoder.js';
import { PartitionAlignment } from './partition-alignment.js';
import { FetchStaleness } from './fetch-staleness.js';
import { OffsetLedger } from './offset-ledger.js';
import {
  backoffDelay,
  checkBackoffPolicy,
  retryWithBackoff,
  unreachableBrokersError,
  type BackoffPolicy,
} from './retry.js';
import { BatchHandoff, Settled } from './batch-handoff.js';
import { GroupCommits, type CommitPayload } from './group-commits.js';
import { ItemCollector, ReleaseTracker } from './source-sinks.js';
import { establishStart, type StartTarget } from './source-start.js';
import {
  defaultConnectRetry,
  defaultConsumerRestart,
  type KafkaSourceInfo,
  type KafkaSourceOptions,
  type KafkaSourceStats,
} from './source-types.js';

export type { KafkaSourceInfo, KafkaSourceOptions, KafkaSourceStats } from './source-types.js';

/**
 * Records from a Kafka topic, the same shape as a file source: iterate items,
 * iterate {@link batches} (one array per fetched partition batch), or
 * {@link decodeInto} a sink (no object per record). Records that carry no
 * `ts` take the message timestamp.
 *
 * Offsets. Kafka's auto-commit is off. The pipeline calls
 * {@link markJudgedUpTo} with the end of each window it has closed and
 * judged; the source commits, per partition, the lowest offset of a message
 * still counted in an open window (see {@link OffsetLedger}), with the
 * judged window end in the commit metadata. A restart on the same group
 * thus replays exactly the open windows' records, and drops replayed records
 * whose windows were all judged before. Redeliveries within a run (after a
 * rebalance, a broker restart, a consumer crash) are dropped by (partition,
 * offset). Counts are exact across restarts; rejection tallies of the
 * replayed stretch may be counted again.
 *
 * Faults. Connecting retries with capped exponential backoff and jitter, then
 * fails with `BrokersUnreachableError` naming the brokers. A consumer
 * that crashes (the client gives up on a request, or hits a non-retriable
 * error) is replaced by a new one on the same group, with the same backoff;
 * the client's own restart is switched off so every crash comes here.
 * Rebalances and crashes are reported as events.
 *
 * Sliding windows (hop < window): a record of a partly judged stretch is
 * replayed to fill its open windows, so after a resume the pipeline must drop
 * closed windows ending at or before {@link KafkaSourceInfo.judgedThrough}.
 *
 * One consumer per group is the intended use: the verdicts need the whole
 * topic, and a second member would take some partitions away.
 */
export class KafkaSource implements AsyncIterable<SourceItem> {
  /** The topic read. */
  readonly topic: string;
  /** The consumer group (given, or made for this run). */
  readonly groupId: string;
  /** Where shards come from. */
  readonly shardFrom: ShardFrom;
  private readonly options: KafkaSourceOptions;
  private readonly kafka: Kafka;
  private readonly ledger: OffsetLedger;
  private readonly decoder: KafkaMessageDecoder;
  private readonly tracker: ReleaseTracker;
  private readonly alignment: PartitionAlignment<KafkaMessage>;
  private collector: ItemCollector | null = null;
  private readonly listeners = new Set<KafkaSourceListener>();
  private readonly stopping = new AbortController();
  private readonly connectRetry: BackoffPolicy;
  private readonly consumerRestart: BackoffPolicy;
  private readonly finished = new Settled();
  private connecting: Promise<KafkaSourceInfo> | null = null;
  private consumer: Consumer | null = null;
  private mode: 'sink' | 'batches' | null = null;
  private handoff: BatchHandoff | null = null;
  private collected: SourceItem[] = [];
  private closed = false;
  private ended = false;
  private closing: Promise<void> | null = null;
  private commitTimer: NodeJS.Timeout | null = null;
  private readonly commits: GroupCommits;
  private pendingEnd: Map<number, number> | null = null;
  private failures = 0;
  private scratchPartitions = new Int32Array(1024);
  private scratchOffsets = new Float64Array(1024);
  private scratchReleases = new Float64Array(1024);
  private handedOn = 0;
  private delivering = false;
  private paused = new Set<number>();
  private readonly bufferedThrough = new Map<number, number>();
  /**
   * Quiet partitions, on a clock that runs while batches come: a gap between two batches
   * counts for at most 1 s (live fetches return every maxWaitTime, 500 ms by default).
   */
  private readonly staleness = new FetchStaleness(1000);
  /** With `untilMs`: per partition, the first offset not to read. */
  private readonly endOffsets = new Map<number, number>();
  private readonly counters = {
    messages: 0,
    redeliveriesSkipped: 0,
    consumerRecreations: 0,
    commits: 0,
  };

  /**
   * @param options connection, topic, group, start position, shard source,
   *   window geometry; checked here (UsageError naming the option)
   */
  constructor(options: KafkaSourceOptions) {
    if (options.brokers.length === 0) {
      throw new UsageError('--brokers', '', 'names no broker (give host:port[,host:port])');
    }
    if (options.topic === '') throw new UsageError('--topic', '', 'is empty');
    try {
      this.ledger = new OffsetLedger(options.windows);
    } catch (error) {
      throw new UsageError('--window', `${options.windows.windowMs}ms`, (error as Error).message);
    }
    this.options = options;
    this.topic = options.topic;
    this.groupId = options.groupId ?? `shardwise-${randomUUID()}`;
    this.shardFrom = options.shardFrom ?? { kind: 'field' };
    this.connectRetry = checkBackoffPolicy(
      options.connectRetry ?? defaultConnectRetry,
      'connectRetry',
    );
    this.consumerRestart = checkBackoffPolicy(
      options.consumerRestart ?? defaultConsumerRestart,
      'consumerRestart',
    );
    this.decoder = new KafkaMessageDecoder(this.shardFrom);
    this.commits = new GroupCommits(
      this.topic,
      this.ledger,
      options.commitOffsets !== false,
      (event) => this.emit(event),
    );
    this.tracker = new ReleaseTracker(this.ledger);
    this.alignment = new PartitionAlignment<KafkaMessage>(
      options.alignmentMs ?? Math.floor((options.windows.latenessMs ?? 0) / 2),
      (message) => Number(message.timestamp),
    );
    if (options.onEvent !== undefined) this.listeners.add(options.onEvent);
    this.kafka = createKafkaClient(
      options,
      (entry: KafkaClientLog) => this.emit({ type: 'client-log', ...entry }),
      options.consumerRetries ?? 5,
    );
  }

  /** Subscribes to the source's events; returns the unsubscribe function. */
  on(listener: KafkaSourceListener): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }

  /** A snapshot of the running counts. */
  get stats(): KafkaSourceStats {
    return { ...this.counters, alreadyJudgedSkipped: this.tracker.alreadyJudged };
  }

  /** End of the last window judged (this run or, on resume, the previous one); -Infinity before any. */
  get judgedThrough(): number {
    return this.ledger.judgedThrough;
  }

  /**
   * Tells the source that every window ending at or before `windowEnd` is
   * closed and judged, so its records may be committed past. Call it after
   * judging each closed window (with the window's `end`), also for windows
   * closed by the wall clock. Never moves back; cheap (the commit itself runs
   * on the commit interval).
   */
  markJudgedUpTo(windowEnd: number): void {
    this.ledger.markJudgedUpTo(windowEnd);
  }

  /**
   * Connects (retrying with backoff), reads the topic's partition count, the
   * group's committed positions and the resume point, and finds the start
   * position of partitions without one (`--from`). Called by the reading methods when
   * needed; call it first to learn the partition count (the shard universe
   * of `--shard-from partition`). Idempotent.
   */
  connect(): Promise<KafkaSourceInfo> {
    this.connecting ??= establishStart(this.startTarget());
    return this.connecting;
  }

  /**
   * Decodes every message into `sink` without building an object per
   * record: the fastest way to count. Resolves when the source is closed (or,
   * with `stopAtEnd`, caught up); rejects with a {@link KafkaIngestError}
   * when it cannot go on.
   */
  async decodeInto(sink: RecordSink): Promise<void> {
    this.claim('sink');
    this.tracker.target = sink;
    await this.begin();
    return this.finished.promise;
  }

  /**
   * Yields the records and rejections of each fetched partition batch as one
   * array. The next batch is fetched once the previous array is taken, so a
   * slow pipeline slows the fetching instead of piling up memory. Breaking
   * out of the loop closes the source; a natural end (`stopAtEnd`) leaves it
   * open for the last commit, so call {@link close} after judging.
   */
  async *batches(): AsyncGenerator<SourceItem[], void, undefined> {
    this.claim('batches');
    const handoff = new BatchHandoff();
    this.handoff = handoff;
    this.collector = new ItemCollector(() => this.collected);
    this.tracker.target = this.collector;
    let endedNaturally = false;
    try {
      await this.begin();
      for (;;) {
        const items = await handoff.take();
        if (items === null) {
          endedNaturally = !this.closed;
          return;
        }
        yield items;
      }
    } finally {
      if (!endedNaturally) await this.close();
    }
  }

  /**
   * True while a partition has records fetched but not handed on, or more waiting in Kafka
   * than its last fetch brought: it is behind, not idle.
   */
  backlogged(partition: number): boolean {
    return this.alignment.isBehind(partition);
  }

  /** Yields every record and rejection (see {@link batches}). */
  [Symbol.asyncIterator](): AsyncIterator<SourceItem> {
    return itemsOf(this.batches());
  }

  /**
   * Stops reading: commits the judged positions (never past a record of an
   * open window), leaves the group and disconnects. Records decoded but not
   * yet judged are replayed by the next run on the group. Idempotent.
   */
  close(): Promise<void> {
    this.closing ??= this.shutDown();
    return this.closing;
  }

  private claim(mode: 'sink' | 'batches'): void {
    if (this.mode !== null) {
      throw new Error(`this Kafka source is already being read (${this.mode}); make a new one`);
    }
    this.mode = mode;
  }

  /** Connects, then starts the consumer unless there is nothing to read. */
  private async begin(): Promise<void> {
    try {
      await this.connect();
    } catch (error) {
      if (this.closed) return;
      this.fail(error);
      throw error;
    }
    if (this.closed) return;
    if (this.pendingEnd !== null && this.pendingEnd.size === 0) {
      this.reachEnd();
      return;
    }
    this.commitTimer = setInterval(() => {
      this.commitSoon();
      this.tickAlignment();
    }, this.options.commitIntervalMs ?? 1000);
    this.commitTimer.unref();
    try {
      await retryWithBackoff(() => this.startConsumer(), this.consumerRestart, {
        signal: this.stopping.signal,
        onRetry: (failures, delayMs, error) =>
          this.emit({
            type: 'connect-retry',
            brokers: brokerText(this.options),
            failures,
            delayMs,
            error: causeText(error),
          }),
      });
    } catch (error) {
      if (this.closed) return;
      const failure =
        unreachableBrokersError(error, this.options.brokers) ??
        new KafkaIngestError(
          `cannot start the Kafka consumer of --topic ${this.topic} (--group ${this.groupId}): ${causeText(error)}`,
          { cause: error },
        );
      this.fail(failure);
      throw failure;
    }
  }

  /** What connecting reads from this source and sets up in it (source-start.ts). */
  private startTarget(): StartTarget {
    return {
      options: this.options,
      topic: this.topic,
      groupId: this.groupId,
      connectRetry: this.connectRetry,
      signal: this.stopping.signal,
      ledger: this.ledger,
      tracker: this.tracker,
      commits: this.commits,
      alignment: this.alignment,
      endOffsets: this.endOffsets,
      stopAtEnd: (pending) => {
        this.pendingEnd = pending;
      },
      emit: (event) => this.emit(event),
    };
  }

  /** Makes, connects and runs a consumer, retrying with backoff while the brokers are away. */
  private async startConsumer(): Promise<void> {
    const sessionTimeout = this.options.sessionTimeoutMs ?? 30_000;
    const consumer = this.kafka.consumer({
      groupId: this.groupId,
      sessionTimeout,
      // Kafka's advice: heartbeats no further apart than a third of the session timeout.
      heartbeatInterval:
        this.options.heartbeatIntervalMs ?? Math.min(3000, Math.floor(sessionTimeout / 3)),
      maxWaitTimeInMs: this.options.maxWaitTimeMs ?? 500,
      maxBytesPerPartition: this.options.maxBytesPerPartition ?? 4 << 20,
      maxBytes: this.options.maxBytes ?? 16 << 20,
      allowAutoTopicCreation: false,
      retry: {
        retries: this.options.consumerRetries ?? 5,
        initialRetryTime: 300,
        maxRetryTime: 10_000,
        restartOnFailure: async () => false,
      },
    });
    consumer.on(consumer.events.GROUP_JOIN, ({ payload }) => {
      this.failures = 0;
      // Buffers are dropped: the client fetches from the commit again, and what was
      // already handed on is skipped as a redelivery.
      const held = payload.memberAssignment[this.topic] ?? [];
      this.alignment.reassigned(held);
      this.bufferedThrough.clear();
      this.paused.clear();
      this.staleness.reset(held, Date.now());
      if (held.length > 0) consumer.resume([{ topic: this.topic, partitions: [...held] }]);
      this.seekUncommitted(consumer, held);
      this.emit({
        type: 'group-joined',
        groupId: payload.groupId,
        memberId: payload.memberId,
        partitions: [...(payload.memberAssignment[this.topic] ?? [])].sort((a, b) => a - b),
        durationMs: payload.duration,
      });
    });
    consumer.on(consumer.events.REBALANCING, ({ payload }) => {
      this.emit({ type: 'rebalancing', groupId: payload.groupId, memberId: payload.memberId });
    });
    consumer.on(consumer.events.COMMIT_OFFSETS, ({ payload }) => this.confirmCommit(payload));
    consumer.on(consumer.events.CRASH, ({ payload }) => {
      void this.recover(consumer, payload.error);
    });
    this.consumer = consumer;
    try {
      await consumer.connect();
      await consumer.subscribe({ topics: [this.topic], fromBeginning: true });
      if (this.closed) throw new KafkaIngestError('closed while starting');
      await consumer.run({
        autoCommit: false,
        eachBatchAutoResolve: true,
        partitionsConsumedConcurrently: 1,
        eachBatch: (payload) => this.handleBatch(payload),
      });
    } catch (error) {
      if (this.consumer === consumer) this.consumer = null;
      await consumer.disconnect().catch(() => undefined);
      throw error;
    }
  }

  /**
   * Points partitions the group has no commit for yet at the source's own
   * position (the `--from` start, or the first record of an open window);
   * the client would otherwise start them from the beginning. Runs on every
   * join, before the first fetch; the first commit then makes it lasting.
   */
  private seekUncommitted(consumer: Consumer, partitions: readonly number[]): void {
    for (const partition of partitions) {
      if (this.commits.has(partition)) continue;
      const offset = this.ledger.partition(partition).commitOffset(this.ledger.judgedThrough);
      consumer.seek({ topic: this.topic, partition, offset: String(offset) });
    }
  }

  /** Replaces a crashed consumer; fails the source after too many failures in a row. */
  private async recover(crashed: Consumer, error: Error): Promise<void> {
    if (this.closed || this.consumer !== crashed) return;
    this.consumer = null;
    for (;;) {
      this.failures++;
      if (this.failures >= this.consumerRestart.attempts) {
        this.fail(
          new KafkaIngestError(
            `the Kafka consumer of --topic ${this.topic} (--brokers ${brokerText(this.options)}) ` +
              `failed ${this.failures} times in a row; last error: ${causeText(error)}`,
            { retriable: isRetriable(error), cause: error },
          ),
        );
        return;
      }
      const delayMs = backoffDelay(this.failures, this.consumerRestart);
      this.emit({
        type: 'consumer-crashed',
        error: causeText(error),
        retriable: isRetriable(error),
        failures: this.failures,
        recreateInMs: delayMs,
      });
      await new Promise((resolve) => setTimeout(resolve, delayMs));
      if (this.closed) return;
      const failures = this.failures;
      try {
        await this.startConsumer();
        this.counters.consumerRecreations++;
        this.emit({ type: 'consumer-recreated', failures });
        return;
      } catch (startError) {
        if (this.closed) return;
        error = startError as Error;
      }
    }
  }

  /**
   * Takes one fetched batch: drops redeliveries, buffers the rest for the
   * partition alignment, and hands on whatever the alignment lets through.
   */
  private async handleBatch(payload: EachBatchPayload): Promise<void> {
    if (this.closed || this.ended) return;
    const { batch } = payload;
    const partition = batch.partition;
    const seen = Math.max(
      this.bufferedThrough.get(partition) ?? -1,
      this.ledger.partition(partition).highestProcessed,
    );
    const messages = batch.messages;
    let fresh: KafkaMessage[] = messages;
    let duplicates = 0;
    // Offsets rise within a batch: only a batch starting at or below `seen` holds redeliveries.
    if (messages.length > 0 && Number(messages[0].offset) <= seen) {
      fresh = messages.filter((message) => Number(message.offset) > seen);
      duplicates = messages.length - fresh.length;
    }
    const endOffset = this.endOffsets.get(partition);
    let pastEnd = false;
    if (
      endOffset !== undefined &&
      fresh.length > 0 &&
      Number(fresh[fresh.length - 1].offset) >= endOffset
    ) {
      fresh = fresh.filter((message) => Number(message.offset) < endOffset);
      pastEnd = true;
    }
    if (fresh.length > 0) {
      this.bufferedThrough.set(partition, Number(fresh[fresh.length - 1].offset));
    }
    if (duplicates > 0) {
      this.counters.redeliveriesSkipped += duplicates;
      this.emit({ type: 'redelivery-skipped', partition, messages: duplicates });
    }
    this.staleness.fetched(partition, Date.now());
    this.alignment.append(
      partition,
      fresh,
      pastEnd || Number(batch.lastOffset()) + 1 >= Number(batch.highWatermark),
    );
    await this.deliver(payload);
  }

  /**
   * Drains the alignment into the pipeline (directly, or as one array for an
   * iterating reader), then records the offsets handed on in the ledger,
   * pauses the partitions that still have buffered messages and resumes the
   * others. `payload` keeps the group membership alive while a reader is slow.
   */
  private async deliver(payload: EachBatchPayload | null): Promise<void> {
    if (this.delivering) return;
    this.delivering = true;
    try {
      this.collected = [];
      this.handedOn = 0;
      try {
        this.alignment.drain(this.handOn);
      } catch (error) {
        this.fail(
          new KafkaIngestError(
            `the record pipeline failed reading --topic ${this.topic}: ${causeText(error)}`,
            { cause: error },
          ),
        );
        return;
      }
      const count = this.handedOn;
      let partitions = this.scratchPartitions;
      let offsets = this.scratchOffsets;
      let releases = this.scratchReleases;
      if (this.handoff !== null && this.collected.length > 0) {
        // The scratch arrays are reused by the next delivery; keep this one's.
        partitions = partitions.slice(0, count);
        offsets = offsets.slice(0, count);
        releases = releases.slice(0, count);
        if (!(await this.handoff.put(this.collected, payload))) return;
      }
      const judged = this.ledger.judgedThrough;
      for (let index = 0; index < count; index++) {
        this.ledger.partition(partitions[index]).hold(offsets[index], releases[index], judged);
      }
      this.counters.messages += count;
      this.failures = 0;
      if (this.closed) return;
      this.pauseBuffered();
      if (this.pendingEnd !== null) {
        for (const [partition, end] of this.pendingEnd) {
          if (this.ledger.partition(partition).highestProcessed + 1 >= end) {
            this.pendingEnd.delete(partition);
          }
        }
        if (this.pendingEnd.size === 0) this.reachEnd();
      }
    } finally {
      this.delivering = false;
    }
  }

  /** Decodes one message the alignment lets through; false stops the drain. */
  private readonly handOn = (partition: number, message: KafkaMessage, ts: number): boolean => {
    if (this.closed) return false;
    const tracker = this.tracker;
    tracker.latestRelease = Number.NEGATIVE_INFINITY;
    if (this.collector !== null) this.collector.partition = partition;
    this.decoder.decode(message.value, message.key, partition, ts, tracker);
    const at = this.handedOn++;
    if (at >= this.scratchOffsets.length) this.growScratch();
    this.scratchPartitions[at] = partition;
    this.scratchOffsets[at] = Number(message.offset);
    this.scratchReleases[at] = tracker.latestRelease;
    return true;
  };

  private growScratch(): void {
    const size = this.scratchOffsets.length * 2;
    const partitions = new Int32Array(size);
    partitions.set(this.scratchPartitions);
    const offsets = new Float64Array(size);
    offsets.set(this.scratchOffsets);
    const releases = new Float64Array(size);
    releases.set(this.scratchReleases);
    this.scratchPartitions = partitions;
    this.scratchOffsets = offsets;
    this.scratchReleases = releases;
  }

  /** A partition with buffered messages is not fetched until its buffer is empty. */
  private pauseBuffered(): void {
    const consumer = this.consumer;
    if (consumer === null) return;
    const buffered = new Set(this.alignment.buffered);
    const pause = [...buffered].filter((partition) => !this.paused.has(partition));
    const resume = [...this.paused].filter((partition) => !buffered.has(partition));
    try {
      if (pause.length > 0) consumer.pause([{ topic: this.topic, partitions: pause }]);
      if (resume.length > 0) consumer.resume([{ topic: this.topic, partitions: resume }]);
    } catch {
      // A consumer being recreated after a crash has no group yet and refuses pause and
      // resume (kafkajs throws from a timer, which would end the process). Leave the
      // bookkeeping as it was: the next delivery or alignment tick tries again.
      return;
    }
    this.paused = buffered;
  }

  /**
   * Run on the commit interval: a partition that said it had more but has
   * delivered nothing while the others kept delivering for a long while stops
   * holding the others back (see {@link FetchStaleness} and
   * {@link PartitionAlignment.markCaughtUp}), and whatever that frees is
   * handed on.
   */
  private tickAlignment(): void {
    const staleAfter = Math.max(5000, 10 * (this.options.maxWaitTimeMs ?? 500));
    let released = false;
    for (const partition of this.staleness.stale(staleAfter, (p) =>
      this.alignment.hasBuffered(p),
    )) {
      this.alignment.markCaughtUp(partition);
      released = true;
    }
    // Also hands on what a skipped delivery left buffered.
    if ((released || this.alignment.buffered.length > 0) && !this.closed && !this.ended) {
      void this.deliver(null);
    }
  }

  private reachEnd(): void {
    if (this.ended) return;
    this.ended = true;
    this.emit({ type: 'caught-up', messages: this.counters.messages });
    this.handoff?.end();
    this.finished.resolve();
  }

  private commitSoon(): void {
    const consumer = this.consumer;
    if (this.closed || consumer === null) return;
    this.commits.soon(consumer);
  }

  private confirmCommit(payload: CommitPayload): void {
    const confirmed = this.commits.confirm(payload);
    if (confirmed === null) return;
    this.counters.commits++;
    this.emit({ type: 'committed', ...confirmed });
  }

  private async shutDown(): Promise<void> {
    this.closed = true;
    this.stopping.abort(
      new KafkaIngestError(`the Kafka source of --topic ${this.topic} was closed`),
    );
    if (this.commitTimer !== null) clearInterval(this.commitTimer);
    this.handoff?.end();
    this.alignment.clear();
    await this.connecting?.catch(() => undefined);
    await this.commits.settled();
    const consumer = this.consumer;
    this.consumer = null;
    if (consumer !== null) {
      await this.commits.now(consumer);
      await consumer.disconnect().catch(() => undefined);
    }
    this.finished.resolve();
  }

  private fail(error: unknown): void {
    const failure =
      error instanceof KafkaIngestError
        ? error
        : new KafkaIngestError(causeText(error), { cause: error });
    this.finished.reject(failure);
    this.handoff?.fail(failure);
    void this.close();
  }

  private emit(event: KafkaSourceEvent): void {
    for (const listener of this.listeners) {
      try {
        listener(event);
      } catch {
        // A listener's failure must not stop the source.
      }
    }
  }
}
