/**
 * Event-time alignment of a topic's partitions while a consumer catches up.
 *
 * Event-time windows close when the newest timestamp seen, less the
 * lateness, passes their end. A consumer reading a backlog gets each
 * partition in large fetches, one partition after another, and partitions
 * fill at different rates (keys hash unevenly), so one partition can run
 * minutes ahead of another in event time: the windows close on the fast one
 * and the slow one's records all come too late. Catching up happens exactly
 * when it hurts: at start from `earliest`, and after every restart or outage.
 *
 * The cure here: a partition may not process a message whose timestamp is
 * more than `alignmentMs` ahead of the slowest partition that still has a
 * backlog; it stops there (the rest of its batch is fetched again later) and
 * is paused until the slow ones catch up. With an alignment of at most the
 * lateness, and records in time order within each partition, no record is
 * late because of the catch-up. The clock is the Kafka message timestamp,
 * known without decoding; the project's producer sets it to the record's
 * `ts`, and for other producers the time of writing is a fair stand-in.
 *
 * A partition counts as behind ("lagging") while its highest processed
 * offset is below its high watermark; one that is caught up holds nobody
 * back, so idle partitions never stall the others. Partitions known to have
 * a backlog but not yet fetched hold everyone back until their first batch,
 * which the same fetch round brings. The paused partition with the lowest
 * next timestamp is always allowed on, so the set can never deadlock.
 *
 * Plain numbers, no Kafka client: O(partitions) per batch.
 */
export class PartitionAlignment {
  /** How far ahead of the slowest lagging partition a message may be, ms. */
  readonly alignmentMs: number;
  /** Per lagging partition: last timestamp processed, or for a paused one its next message's. */
  private readonly frontier = new Map<number, number>();
  private readonly paused = new Set<number>();

  /** @param alignmentMs the allowed lead, ms, at least 0 */
  constructor(alignmentMs: number) {
    if (!(alignmentMs >= 0)) throw new RangeError(`alignment ${alignmentMs} ms is not 0 or more`);
    this.alignmentMs = alignmentMs;
  }

  /** Partitions now paused. */
  get pausedPartitions(): readonly number[] {
    return [...this.paused].sort((a, b) => a - b);
  }

  /** A partition has a backlog not yet fetched: it holds the others back until it reports. */
  expect(partition: number): void {
    if (!this.frontier.has(partition)) this.frontier.set(partition, Number.NEGATIVE_INFINITY);
  }

  /**
   * The latest message timestamp `partition` may process now: the slowest
   * other lagging partition's frontier plus the alignment; Infinity when no
   * other partition lags.
   */
  limitFor(partition: number): number {
    let slowest = Number.POSITIVE_INFINITY;
    for (const [other, at] of this.frontier) {
      if (other !== partition && at < slowest) slowest = at;
    }
    return slowest + this.alignmentMs;
  }

  /**
   * After a batch was processed without stopping: the partition's newest
   * processed timestamp, and whether it still has a backlog.
   */
  advanced(partition: number, newestTs: number, lagging: boolean): void {
    if (!lagging) {
      this.frontier.delete(partition);
      return;
    }
    const previous = this.frontier.get(partition) ?? Number.NEGATIVE_INFINITY;
    this.frontier.set(partition, Math.max(previous, newestTs));
  }

  /** The partition stopped before a message stamped `nextTs`; it is paused. */
  pause(partition: number, nextTs: number): void {
    this.frontier.set(partition, nextTs);
    this.paused.add(partition);
  }

  /** Paused partitions that may go on now; they count as running again. */
  takeResumable(): number[] {
    const resumable: number[] = [];
    for (const partition of [...this.paused].sort((a, b) => a - b)) {
      if ((this.frontier.get(partition) as number) <= this.limitFor(partition)) {
        this.paused.delete(partition);
        resumable.push(partition);
      }
    }
    return resumable;
  }

  /**
   * After a rebalance: partitions not held any more are forgotten and every
   * pause is lifted (a new consumer has none); frontiers are kept.
   */
  reassigned(held: readonly number[]): void {
    const keep = new Set(held);
    for (const partition of [...this.frontier.keys()]) {
      if (!keep.has(partition)) this.frontier.delete(partition);
    }
    this.paused.clear();
  }
}
