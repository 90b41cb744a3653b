/**
 * When a partition that said it had more (its last batch stopped short of the high
 * watermark) has been quiet long enough to stop holding the others back
 * ({@link PartitionAlignment.markCaughtUp}: its last offsets were transaction markers, or
 * retention removed them). Quiet is measured on a clock of reading: it runs while batches
 * come from any partition, and a gap between two batches counts for at most `maxGapMs`.
 * So time in which no batch came from anyone (a broker outage, a process held off the CPU)
 * does not count: the quiet partition is then no staler than the rest, and releasing it let
 * its windows close over records still to come (in the suite, 125 records too late after a
 * broker restart, and 1,128 from one partition of a backlog read on a loaded machine). No
 * Kafka client here; O(partitions) a tick, O(1) a batch.
 */
export class FetchStaleness {
  /** The clock of reading, ms, as of the latest batch. */
  private reading = 0;
  /** When the latest batch came (wall clock), or null before the first. */
  private latest: number | null = null;
  /** The reading clock at each partition's last batch. */
  private readonly lastBatch = new Map<number, number>();

  /** @param maxGapMs the most one gap between batches adds to the reading clock */
  constructor(private readonly maxGapMs: number) {
    if (!(maxGapMs > 0)) throw new RangeError(`maxGapMs ${maxGapMs} is not above 0`);
  }

  /** A batch of `partition` came at `now` (wall clock; any batch, even one with nothing new). */
  fetched(partition: number, now: number): void {
    this.advance(now);
    this.lastBatch.set(partition, this.reading);
  }

  /** The partitions held after a (re)join, each as if its batch had just come. */
  reset(held: readonly number[], now: number): void {
    this.advance(now);
    this.lastBatch.clear();
    for (const partition of held) this.lastBatch.set(partition, this.reading);
  }

  /**
   * The partitions whose last batch is more than `staleAfterMs` of reading behind the
   * latest, and for which `waiting(partition)` (messages buffered, not yet handed on) is
   * false. Each is forgotten until its next batch, so it is reported once.
   */
  stale(staleAfterMs: number, waiting: (partition: number) => boolean): number[] {
    const result: number[] = [];
    for (const [partition, at] of this.lastBatch) {
      if (this.reading - at > staleAfterMs && !waiting(partition)) result.push(partition);
    }
    for (const partition of result) this.lastBatch.delete(partition);
    return result.sort((a, b) => a - b);
  }

  private advance(now: number): void {
    if (this.latest !== null)
      this.reading += Math.min(Math.max(0, now - this.latest), this.maxGapMs);
    this.latest = now;
  }
}
