import { randomUUID } from 'node:crypto';
import type { Consumer, Kafka } from 'kafkajs';
import {
  decodePartialSummary,
  PartialSummaryError,
  type PartialSummary,
} from '../../partials/partial-summary.js';
import { UsageError } from '../../errors/usage-error.js';
import { createKafkaClient, subscribeToTopic, type KafkaConnectionOptions } from './connection.js';
import { causeText, KafkaIngestError } from './errors.js';
import { describedPartitionCount } from './topic-metadata.js';
import { commitMetadata, judgedThroughFromMetadata, PartitionLedger } from './offset-ledger.js';

/** Settings of a {@link KafkaSummaryReader}. */
export interface SummaryReaderOptions extends KafkaConnectionOptions {
  /** `--merge`: the summary topic. */
  readonly topic: string;
  /** `--group`: a restart resumes after the last judged window (default: a new group per run). */
  readonly groupId?: string;
  /** `--from` for summary partitions the group has no position for. */
  readonly from: 'earliest' | 'latest';
  /** Receives each summary, in order per summary partition. */
  readonly onSummary: (summary: PartialSummary) => void;
  /** Receives each message that is not a summary this build can merge. */
  readonly onRefused: (reason: string) => void;
  /** Longest wait of a fetch, ms (default 500). */
  readonly maxWaitTimeMs?: number;
}

/**
 * Reads the summary topic for the judge (`watch --merge`). Commits, per summary partition,
 * the lowest offset of a summary for a window not yet judged (with the judged window end
 * in the metadata), so a restarted judge on the same group reads again exactly the
 * summaries of the windows it had not judged and starts after the judged ones.
 */
export class KafkaSummaryReader {
  readonly groupId: string;
  private readonly options: SummaryReaderOptions;
  private readonly kafka: Kafka;
  private readonly ledgers = new Map<number, PartitionLedger>();
  private consumer: Consumer | null = null;
  private judged = Number.NEGATIVE_INFINITY;
  private timer: NodeJS.Timeout | null = null;
  private lastCommitted = '';

  constructor(options: SummaryReaderOptions) {
    if (options.brokers.length === 0) {
      throw new UsageError('--brokers', '', 'names no broker (give host:port[,host:port])');
    }
    this.options = options;
    this.groupId = options.groupId ?? `shardwise-merge-${randomUUID()}`;
    this.kafka = createKafkaClient(options, () => undefined, 5);
  }

  /** Connects and reads the resume point: end of the last window judged on this group, or null. */
  async connect(): Promise<number | null> {
    const admin = this.kafka.admin();
    try {
      await admin.connect();
      await describedPartitionCount(admin, this.options.topic, `--merge ${this.options.topic}`);
      const [entry] = await admin.fetchOffsets({
        groupId: this.groupId,
        topics: [this.options.topic],
      });
      for (const { metadata } of entry?.partitions ?? []) {
        this.judged = Math.max(this.judged, judgedThroughFromMetadata(metadata));
      }
    } catch (error) {
      if (error instanceof KafkaIngestError) throw error;
      throw new KafkaIngestError(`cannot read --merge ${this.options.topic}: ${causeText(error)}`, {
        cause: error,
      });
    } finally {
      await admin.disconnect().catch(() => undefined);
    }
    return Number.isFinite(this.judged) ? this.judged : null;
  }

  /** Starts consuming; summaries go to `onSummary` from the client's fetch loop. */
  async start(): Promise<void> {
    const consumer = this.kafka.consumer({
      groupId: this.groupId,
      maxWaitTimeInMs: this.options.maxWaitTimeMs ?? 500,
      allowAutoTopicCreation: false,
    });
    this.consumer = consumer;
    await subscribeToTopic(consumer, this.options.topic, this.options.from);
    await consumer.run({
      autoCommit: false,
      eachBatch: async ({ batch }) => {
        const ledger = this.ledger(batch.partition);
        for (const message of batch.messages) {
          const offset = Number(message.offset);
          if (ledger.isDuplicate(offset)) continue;
          let summary: PartialSummary;
          try {
            summary = decodePartialSummary(message.value?.toString('utf8') ?? '');
          } catch (error) {
            if (!(error instanceof PartialSummaryError)) throw error;
            ledger.hold(offset, Number.NEGATIVE_INFINITY, this.judged);
            this.options.onRefused(error.message);
            continue;
          }
          ledger.hold(offset, summary.end, this.judged);
          this.options.onSummary(summary);
        }
      },
    });
    this.timer = setInterval(() => void this.commit(), 1000);
    this.timer.unref();
  }

  /** Every window ending at or before `windowEnd` is judged: its summaries may be committed past. */
  markJudgedUpTo(windowEnd: number): void {
    if (windowEnd > this.judged) this.judged = windowEnd;
  }

  /** Commits the judged positions, leaves the group and disconnects. */
  async close(): Promise<void> {
    if (this.timer !== null) clearInterval(this.timer);
    await this.commit();
    await this.consumer?.disconnect().catch(() => undefined);
  }

  private ledger(partition: number): PartitionLedger {
    let ledger = this.ledgers.get(partition);
    if (ledger === undefined) {
      ledger = new PartitionLedger();
      this.ledgers.set(partition, ledger);
    }
    return ledger;
  }

  private async commit(): Promise<void> {
    const consumer = this.consumer;
    if (consumer === null || this.options.groupId === undefined) return;
    const metadata = commitMetadata(this.judged);
    const offsets = [...this.ledgers].map(([partition, ledger]) => ({
      topic: this.options.topic,
      partition,
      offset: String(ledger.commitOffset(this.judged)),
      metadata,
    }));
    const text = JSON.stringify(offsets);
    if (offsets.length === 0 || text === this.lastCommitted) return;
    try {
      await consumer.commitOffsets(offsets);
      this.lastCommitted = text;
    } catch {
      // Tried again on the next tick; a restart before then replays a little more.
    }
  }
}
