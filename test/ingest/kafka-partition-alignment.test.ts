// Partition alignment without a broker: limits worked by hand from "the slowest other
// lagging partition's frontier plus the alignment", and a simulation of a catch-up over
// partitions of unequal rates checking the two promises: no deadlock, and no partition
// more than the alignment ahead of a lagging one.
import { describe, expect, it } from 'vitest';
import { PartitionAlignment } from '../../src/ingest/kafka-partition-alignment.js';

describe('PartitionAlignment', () => {
  it('limits a partition to the slowest other lagging partition plus the alignment', () => {
    const alignment = new PartitionAlignment(1000);
    expect(alignment.limitFor(0)).toBe(Infinity);
    alignment.advanced(0, 5000, true);
    alignment.advanced(1, 8000, true);
    expect(alignment.limitFor(0)).toBe(9000);
    expect(alignment.limitFor(1)).toBe(6000);
    // Partition 0 catches up: it holds nobody back any more.
    alignment.advanced(0, 5200, false);
    expect(alignment.limitFor(1)).toBe(Infinity);
  });

  it('holds everyone back for a partition with a backlog that has not reported yet', () => {
    const alignment = new PartitionAlignment(1000);
    alignment.expect(2);
    expect(alignment.limitFor(0)).toBe(-Infinity);
    expect(alignment.limitFor(2)).toBe(Infinity);
  });

  it('resumes a paused partition once the slow ones come within the alignment', () => {
    const alignment = new PartitionAlignment(1000);
    alignment.advanced(0, 1000, true);
    alignment.pause(1, 5000);
    expect(alignment.takeResumable()).toEqual([]);
    alignment.advanced(0, 3999, true);
    expect(alignment.takeResumable()).toEqual([]);
    alignment.advanced(0, 4000, true);
    expect(alignment.takeResumable()).toEqual([1]);
    expect(alignment.pausedPartitions).toEqual([]);
  });

  it('never leaves every partition paused: the one with the earliest next message goes on', () => {
    const alignment = new PartitionAlignment(0);
    alignment.pause(0, 7000);
    alignment.pause(1, 3000);
    alignment.pause(2, 9000);
    expect(alignment.takeResumable()).toEqual([1]);
  });

  it('forgets partitions given away in a rebalance and lifts every pause', () => {
    const alignment = new PartitionAlignment(1000);
    alignment.expect(3);
    alignment.pause(1, 5000);
    alignment.reassigned([0, 1]);
    expect(alignment.pausedPartitions).toEqual([]);
    expect(alignment.limitFor(0)).toBe(6000);
  });

  it('keeps a simulated catch-up within the alignment and always finishes', () => {
    // Three partitions with a backlog of 10, 80 and 300 messages over the same 60 s, read
    // in fetches of up to 50 messages per partition per round, as a consumer would.
    const alignmentMs = 2000;
    const partitions = [10, 80, 300].map((count) =>
      Array.from({ length: count }, (_, i) => Math.floor((i * 60_000) / count)),
    );
    const next = partitions.map(() => 0);
    const paused = new Set<number>();
    const alignment = new PartitionAlignment(alignmentMs);
    partitions.forEach((_, p) => alignment.expect(p));
    const processed: { partition: number; ts: number }[] = [];
    for (let round = 0; round < 1000 && next.some((n, p) => n < partitions[p].length); round++) {
      for (let p = 0; p < partitions.length; p++) {
        if (paused.has(p) || next[p] >= partitions[p].length) continue;
        const limit = alignment.limitFor(p);
        const batch = partitions[p].slice(next[p], next[p] + 50);
        let newest = -Infinity;
        let stopped = Number.NaN;
        for (const ts of batch) {
          if (ts > limit) {
            stopped = ts;
            break;
          }
          processed.push({ partition: p, ts });
          newest = ts;
          next[p]++;
        }
        if (Number.isNaN(stopped)) alignment.advanced(p, newest, next[p] < partitions[p].length);
        else {
          alignment.pause(p, stopped);
          paused.add(p);
        }
        for (const resumed of alignment.takeResumable()) paused.delete(resumed);
      }
    }
    expect(processed).toHaveLength(390);
    // Every record processed is at most the alignment ahead of the next record of every
    // other partition with a backlog, so with this much lateness none of those is late.
    const position = partitions.map(() => -1);
    for (const { partition, ts } of processed) {
      position[partition]++;
      for (let other = 0; other < partitions.length; other++) {
        const lagging = position[other] + 1 < partitions[other].length;
        if (other !== partition && lagging) {
          expect(ts - partitions[other][position[other] + 1]).toBeLessThanOrEqual(alignmentMs);
        }
      }
    }
  });
});
