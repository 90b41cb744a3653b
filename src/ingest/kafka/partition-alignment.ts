/**
 * Fetch alignment of a topic's partitions while a consumer catches up: a memory and
 * latency aid, not what keeps records on time. Correctness comes from the windows keeping
 * event time per partition (src/window/event-time-window.ts): a record in order within its
 * partition is never late, whatever this alignment does. What the alignment buys is that
 * partitions are handed on at about the same pace, so fewer windows stay open at once.
 *
 * Event-time windows close when the newest timestamp seen, less the
 * lateness, passes their end. A consumer reading a backlog gets each
 * partition in large fetches, one partition after another, and partitions
 * fill at different rates (keys hash unevenly), so one partition can run
 * minutes ahead of another in event time: the windows close on the fast one
 * and the slow one's records all come too late. Catching up happens exactly
 * when it hurts: at start from `earliest`, and after every restart or outage.
 *
 * The cure here is a merge: each fetched batch is buffered per partition,
 * and messages are handed on in (nearly) timestamp order across the
 * buffers. A message may go once it is at most `alignmentMs` ahead of every
 * other partition still behind: the head of its buffer, or, for a partition
 * with a backlog but nothing buffered (not fetched yet), its last timestamp
 * handed on. A partition with something buffered is not fetched again until
 * its buffer is empty, so memory stays at about one fetch per partition. A
 * partition that has caught up holds nobody back, so idle partitions never
 * stall the others. With an alignment of at most the lateness, and records
 * in time order within each partition, no record is late because of the
 * catch-up.
 *
 * The clock is the Kafka message timestamp, known without decoding; the
 * project's producer sets it to the record's `ts`, and for other producers
 * the time of writing is a fair stand-in. A message without a usable one
 * goes at once.
 *
 * No Kafka client here; O(partitions) per run of messages handed on.
 */
export class PartitionAlignment<M> {
  /** How far ahead of the slowest partition behind a message may be, ms. */
  readonly alignmentMs: number;
  private readonly timestampOf: (message: M) => number;
  private readonly partitions = new Map<number, PartitionQueue<M>>();

  /**
   * @param alignmentMs the allowed lead, ms, at least 0 (Infinity: hand batches on as they come)
   * @param timestampOf a message's timestamp, epoch ms
   */
  constructor(alignmentMs: number, timestampOf: (message: M) => number) {
    if (!(alignmentMs >= 0)) throw new RangeError(`alignment ${alignmentMs} ms is not 0 or more`);
    this.alignmentMs = alignmentMs;
    this.timestampOf = timestampOf;
  }

  /** A partition has a backlog not yet fetched: it holds the others back until its first batch. */
  expect(partition: number): void {
    this.queue(partition).lagging = true;
  }

  /**
   * Buffers a fetched batch (messages in offset order, none seen before);
   * `caughtUp` says whether the partition has no more after them.
   */
  append(partition: number, messages: readonly M[], caughtUp: boolean): void {
    const queue = this.queue(partition);
    // The batch array is kept as it is (never written here), not copied.
    queue.messages =
      queue.next < queue.messages.length
        ? queue.messages.slice(queue.next).concat(messages)
        : messages;
    queue.next = 0;
    queue.lagging = !caughtUp;
  }

  /**
   * Stops counting a partition as behind though its last batch said more
   * was coming: for a partition that has delivered nothing for a long time
   * (its last offsets were transaction markers, or retention removed them),
   * so it cannot hold the others back for ever.
   */
  markCaughtUp(partition: number): void {
    const queue = this.partitions.get(partition);
    if (queue !== undefined) queue.lagging = false;
  }

  /** True while a partition has buffered messages or a backlog not yet fetched. */
  isBehind(partition: number): boolean {
    const queue = this.partitions.get(partition);
    return queue !== undefined && (queue.lagging || queue.next < queue.messages.length);
  }

  /** True while a partition has buffered messages (and so should not be fetched). */
  hasBuffered(partition: number): boolean {
    const queue = this.partitions.get(partition);
    return queue !== undefined && queue.next < queue.messages.length;
  }

  /** Partitions with buffered messages. */
  get buffered(): number[] {
    const result: number[] = [];
    for (const [partition, queue] of this.partitions) {
      if (queue.next < queue.messages.length) result.push(partition);
    }
    return result.sort((a, b) => a - b);
  }

  /**
   * Hands on every message the alignment allows now, run by run, always from
   * the partition with the earliest head, with its timestamp (-Infinity when
   * it has none); `handle` returns false to stop (the source is closing).
   * O(partitions) per run.
   */
  drain(handle: (partition: number, message: M, ts: number) => boolean): void {
    for (;;) {
      let best: PartitionQueue<M> | null = null;
      let bestPartition = -1;
      let bestHead = Number.POSITIVE_INFINITY;
      for (const [partition, queue] of this.partitions) {
        if (queue.next >= queue.messages.length) continue;
        const head = this.stamp(queue.messages[queue.next]);
        if (best === null || head < bestHead) {
          best = queue;
          bestPartition = partition;
          bestHead = head;
        }
      }
      if (best === null) return;
      const limit = this.slowestOther(bestPartition) + this.alignmentMs;
      if (bestHead > limit) return;
      const messages = best.messages;
      let at = best.next;
      while (at < messages.length) {
        const ts = this.stamp(messages[at]);
        if (ts > limit) break;
        if (ts > best.lastTs) best.lastTs = ts;
        best.next = ++at;
        if (!handle(bestPartition, messages[at - 1], ts)) return;
      }
      if (best.next >= messages.length) {
        best.messages = [];
        best.next = 0;
      }
    }
  }

  /**
   * After a rebalance: every buffer is dropped (the client fetches those
   * messages again from the commit) and partitions not held are forgotten.
   */
  reassigned(held: readonly number[]): void {
    const keep = new Set(held);
    for (const [partition, queue] of [...this.partitions]) {
      if (!keep.has(partition)) this.partitions.delete(partition);
      else {
        queue.messages = [];
        queue.next = 0;
      }
    }
  }

  /** Drops every buffer (the source stops). */
  clear(): void {
    this.partitions.clear();
  }

  /** The earliest position of the other partitions still behind; Infinity when none is. */
  private slowestOther(partition: number): number {
    let slowest = Number.POSITIVE_INFINITY;
    for (const [other, queue] of this.partitions) {
      if (other === partition) continue;
      if (queue.next < queue.messages.length) {
        const head = this.stamp(queue.messages[queue.next]);
        if (head < slowest) slowest = head;
      } else if (queue.lagging && queue.lastTs < slowest) {
        slowest = queue.lastTs;
      }
    }
    return slowest;
  }

  private stamp(message: M): number {
    const ts = this.timestampOf(message);
    return Number.isFinite(ts) ? ts : Number.NEGATIVE_INFINITY;
  }

  private queue(partition: number): PartitionQueue<M> {
    let queue = this.partitions.get(partition);
    if (queue === undefined) {
      queue = { messages: [], next: 0, lagging: false, lastTs: Number.NEGATIVE_INFINITY };
      this.partitions.set(partition, queue);
    }
    return queue;
  }
}

interface PartitionQueue<M> {
  messages: readonly M[];
  next: number;
  /** More messages wait in Kafka beyond the buffer. */
  lagging: boolean;
  /** Latest timestamp handed on. */
  lastTs: number;
}
