import type { Consumer } from 'kafkajs';
import { causeText } from './errors.js';
import type { KafkaSourceEvent, PartitionOffset } from './events.js';
import { commitMetadata, judgedThroughFromMetadata, type OffsetLedger } from './offset-ledger.js';

/** What the client reports of a commit the group coordinator confirmed. */
export interface CommitPayload {
  readonly topics: {
    topic: string;
    partitions: { partition: number; offset: unknown; metadata?: unknown }[];
  }[];
}

/**
 * The Kafka source's commits to its group: each partition's judged position (below the
 * first record still counted in an open window, see {@link OffsetLedger}) with
 * `judged-through` metadata, sent only where it differs from the last position the
 * coordinator confirmed, one commit at a time.
 */
export class GroupCommits {
  /** Per partition, `offset|metadata` of the last confirmed commit (or the one resumed from). */
  private readonly confirmed = new Map<number, string>();
  private committing: Promise<void> | null = null;

  /**
   * @param topic the source's topic
   * @param ledger the judged positions
   * @param enabled false for `commitOffsets: false` (nothing is ever sent)
   * @param emit where a failed commit is reported
   */
  constructor(
    private readonly topic: string,
    private readonly ledger: OffsetLedger,
    private readonly enabled: boolean,
    private readonly emit: (event: KafkaSourceEvent) => void,
  ) {}

  /** A position the group had committed when the source started: it counts as confirmed. */
  resumed(partition: number, offset: number, metadata: string | null): void {
    this.confirmed.set(partition, `${offset}|${metadata}`);
  }

  /** Whether the group holds a position for the partition. */
  has(partition: number): boolean {
    return this.confirmed.has(partition);
  }

  /** Starts a commit unless one is on its way. */
  soon(consumer: Consumer): void {
    if (this.committing !== null) return;
    this.committing = this.now(consumer).finally(() => {
      this.committing = null;
    });
  }

  /** Waits for the commit on its way, if any. */
  async settled(): Promise<void> {
    await this.committing;
  }

  /** Commits the judged positions that differ from the last confirmed commit. */
  async now(consumer: Consumer): Promise<void> {
    if (!this.enabled) return;
    const metadata = commitMetadata(this.ledger.judgedThrough);
    const changed = this.ledger
      .commitOffsets()
      .filter(({ partition, offset }) => this.confirmed.get(partition) !== `${offset}|${metadata}`);
    if (changed.length === 0) return;
    try {
      await consumer.commitOffsets(
        changed.map(({ partition, offset }) => ({
          topic: this.topic,
          partition,
          offset: String(offset),
          metadata,
        })),
      );
    } catch (error) {
      this.emit({ type: 'commit-failed', error: causeText(error) });
    }
  }

  /**
   * Notes the commits the coordinator confirmed; what they were (offsets and the newest
   * judged-through), or null when none was of this topic.
   */
  confirm(payload: CommitPayload): {
    offsets: PartitionOffset[];
    judgedThrough: number | null;
  } | null {
    const offsets: PartitionOffset[] = [];
    let judged: number | null = null;
    for (const { topic, partitions } of payload.topics) {
      if (topic !== this.topic) continue;
      for (const { partition, offset, metadata } of partitions) {
        const text = typeof metadata === 'string' ? metadata : null;
        this.confirmed.set(partition, `${String(offset)}|${text}`);
        offsets.push({ partition, offset: Number(String(offset)) });
        const through = judgedThroughFromMetadata(text);
        if (Number.isFinite(through)) judged = through;
      }
    }
    if (offsets.length === 0) return null;
    return { offsets, judgedThrough: judged };
  }
}
