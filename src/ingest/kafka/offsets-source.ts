import { setTimeout as sleepFor } from 'node:timers/promises';
import type { Admin } from 'kafkajs';
import type { SourceItem } from '../file-source.js';
import { brokerText, createKafkaClient, type KafkaConnectionOptions } from './connection.js';
import type { RecordSource, SourceStart } from '../record-source.js';

/** How long after a hop boundary the end offsets are read: writes in flight land first. */
const readDelayMs = 50;

/** Settings of {@link KafkaOffsetsSource}. */
export interface OffsetsSourceOptions extends KafkaConnectionOptions {
  readonly topic: string;
  /** The window hop, ms: the end offsets are read just after each hop boundary. */
  readonly hopMs: number;
  /** Wall clock, epoch ms (tests replace it). */
  readonly now?: () => number;
  /** The topic now has `count` partitions (it gained some): the universe must grow. */
  readonly onPartitions?: (count: number) => void;
  /** Warnings of the Kafka client, as text. */
  readonly onWarning?: (text: string) => void;
  /** Retries of each offset request before the source fails (default 5). */
  readonly retries?: number;
}

/**
 * A topic's balance from its offsets alone (`watch --offsets-only`): the shards are the
 * topic's partitions, named as `--shard-from partition` names them ("0", "1", ...), and a
 * partition's load in a hop is the growth of its end offset between two reads taken just
 * after consecutive hop boundaries (one ListOffsets request for the whole topic each), so a
 * window holds what was written in it, shifted by the read's latency (tens of ms). The
 * growth is stamped at the last millisecond of the hop it belongs to; a hop without growth
 * still moves event time (a zero count for the first partition). The first, partial hop
 * after start is only a baseline. No message is fetched, so a topic of any size costs one
 * request per hop.
 *
 * The end offset read is the high watermark (the offset after the last record replicated
 * to every in-sync replica). Offsets count record positions, not records delivered:
 * transaction markers take a position each, aborted transactions keep theirs, and
 * compaction removes records without giving positions back, so the growth is an upper
 * bound on the records written. Partitions the topic gains mid-run start from offset 0 and
 * grow the universe. A partition whose end offset went down (the topic was deleted and
 * made again) starts afresh without counting.
 */
export class KafkaOffsetsSource implements RecordSource {
  readonly label: string;
  readonly live = true;
  private readonly options: OffsetsSourceOptions;
  private readonly admin: Admin;
  private readonly now: () => number;
  private readonly ends = new Map<number, number>();
  private readonly stopping = new AbortController();
  private opening: Promise<SourceStart> | null = null;
  private partitionCount = 0;
  private closed = false;

  constructor(options: OffsetsSourceOptions) {
    if (!Number.isSafeInteger(options.hopMs) || options.hopMs < 1) {
      throw new RangeError(`hop ${options.hopMs} ms is not a whole number above 0`);
    }
    this.options = options;
    this.label = `offsets of topic ${options.topic}`;
    this.now = options.now ?? Date.now;
    const kafka = createKafkaClient(
      options,
      (entry) => options.onWarning?.(`${entry.namespace}: ${entry.message}`),
      options.retries ?? 5,
    );
    this.admin = kafka.admin();
  }

  open(): Promise<SourceStart> {
    this.opening ??= this.connect();
    return this.opening;
  }

  async *batches(): AsyncGenerator<SourceItem[], void, undefined> {
    await this.open();
    try {
      let first = true;
      while (!this.closed) {
        const hop = this.options.hopMs;
        const boundary = (Math.floor(this.now() / hop) + 1) * hop;
        try {
          await sleepFor(boundary + readDelayMs - this.now(), undefined, {
            signal: this.stopping.signal,
          });
        } catch {
          return;
        }
        if (this.closed) return;
        const items = await this.poll(boundary - 1);
        // The hop the run started in was seen only in part.
        if (first) first = false;
        else yield items;
      }
    } finally {
      await this.close();
    }
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    this.stopping.abort();
    await this.admin.disconnect().catch(() => undefined);
  }

  /** Offsets carry no judged position: nothing to commit. */
  markJudgedUpTo(): void {}

  /** Every partition is read whole at each poll: none is ever behind. */
  backlogged(): boolean {
    return false;
  }

  private async connect(): Promise<SourceStart> {
    try {
      await this.admin.connect();
      const offsets = await this.admin.fetchTopicOffsets(this.options.topic);
      for (const entry of offsets) this.ends.set(entry.partition, Number(entry.high));
      this.partitionCount = offsets.length;
    } catch (error) {
      await this.admin.disconnect().catch(() => undefined);
      throw new Error(
        `cannot read the end offsets of --topic ${this.options.topic} on ${brokerText(this.options)}: ${(error as Error).message}`,
        { cause: error },
      );
    }
    if (this.partitionCount === 0) {
      throw new Error(`--topic ${this.options.topic} has no partitions`);
    }
    return { partitions: this.partitionCount, backlogPartitions: [], judgedThrough: null };
  }

  /** One ListOffsets round: the growth of every partition since the last one, stamped `ts`. */
  private async poll(ts: number): Promise<SourceItem[]> {
    let offsets: { partition: number; high: string }[];
    try {
      offsets = await this.admin.fetchTopicOffsets(this.options.topic);
    } catch (error) {
      throw new Error(
        `cannot read the end offsets of --topic ${this.options.topic} on ${brokerText(this.options)}: ${(error as Error).message}`,
        { cause: error },
      );
    }
    const items: SourceItem[] = [];
    let highest = this.partitionCount;
    for (const { partition, high } of offsets) {
      const end = Number(high);
      const previous = this.ends.get(partition) ?? 0;
      if (end > previous) {
        items.push({ ts, shard: String(partition), count: end - previous });
      }
      this.ends.set(partition, end);
      if (partition + 1 > highest) highest = partition + 1;
    }
    if (highest > this.partitionCount) {
      this.partitionCount = highest;
      this.options.onPartitions?.(highest);
    }
    if (items.length === 0) items.push({ ts, shard: '0', count: 0 });
    return items;
  }
}
