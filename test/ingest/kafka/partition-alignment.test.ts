// Partition alignment without a broker. The expected hand-over orders are worked by hand
// from the rule "a message goes when it is at most the alignment ahead of every other
// partition still behind"; a simulated catch-up over partitions of unequal rates checks
// the two promises: every message handed on, and none more than the alignment ahead of a
// partition still behind.
import { describe, expect, it } from 'vitest';
import { PartitionAlignment } from '../../../src/ingest/kafka/partition-alignment.js';

/** Messages are their own timestamps here. */
function alignment(ms: number): PartitionAlignment<number> {
  return new PartitionAlignment<number>(ms, (ts) => ts);
}

function drained(merge: PartitionAlignment<number>): [number, number][] {
  const out: [number, number][] = [];
  merge.drain((partition, ts) => {
    out.push([partition, ts]);
    return true;
  });
  return out;
}

describe('PartitionAlignment', () => {
  it('hands on buffered batches merged by time within the alignment', () => {
    const merge = alignment(0);
    merge.append(0, [1, 2, 5, 6], true);
    merge.append(1, [3, 4, 7], true);
    expect(drained(merge)).toEqual([
      [0, 1],
      [0, 2],
      [1, 3],
      [1, 4],
      [0, 5],
      [0, 6],
      [1, 7],
    ]);
    expect(merge.buffered).toEqual([]);
  });

  it('lets a partition run ahead by at most the alignment', () => {
    const merge = alignment(10);
    merge.append(0, [0, 5, 10, 15, 20], true);
    merge.append(1, [12], true);
    // The earliest head goes first, in a run up to 12 + 10 = 22: all of partition 0 (20 is
    // 8 ahead of partition 1's 12, within the 10 allowed), then 12.
    expect(drained(merge).map(([, ts]) => ts)).toEqual([0, 5, 10, 15, 20, 12]);
    merge.append(0, [40], true);
    merge.append(1, [25], true);
    // 40 is 15 ahead of 25: 25 must go first.
    expect(drained(merge).map(([, ts]) => ts)).toEqual([25, 40]);
  });

  it('waits for a partition with a backlog that has nothing buffered, then goes on', () => {
    const merge = alignment(1000);
    merge.expect(1);
    merge.append(0, [0, 500, 3000], true);
    // Partition 1 has not reported: nothing may go.
    expect(drained(merge)).toEqual([]);
    expect(merge.hasBuffered(0)).toBe(true);
    merge.append(1, [100, 200], false);
    // Partition 0 goes first up to 100 + 1000 (0 and 500), then partition 1's two; partition
    // 1 has more to come, so partition 0's 3000 waits (its last was 200, 3000 > 1200).
    expect(drained(merge)).toEqual([
      [0, 0],
      [0, 500],
      [1, 100],
      [1, 200],
    ]);
    expect(merge.buffered).toEqual([0]);
    merge.append(1, [2500], true);
    expect(drained(merge)).toEqual([
      [1, 2500],
      [0, 3000],
    ]);
  });

  it('lets caught-up and stalled partitions hold nobody back', () => {
    const merge = alignment(0);
    merge.append(1, [5], false);
    expect(drained(merge)).toEqual([[1, 5]]);
    merge.append(0, [100], true);
    // Partition 1 is behind at 5 with nothing buffered: 100 waits.
    expect(drained(merge)).toEqual([]);
    merge.markCaughtUp(1);
    expect(drained(merge)).toEqual([[0, 100]]);
  });

  it('stops when the handler says so and keeps the rest buffered', () => {
    const merge = alignment(Infinity);
    merge.append(0, [1, 2, 3], true);
    let taken = 0;
    merge.drain(() => ++taken < 2);
    expect(taken).toBe(2);
    expect(drained(merge)).toEqual([[0, 3]]);
  });

  it('drops buffers on a rebalance and forgets partitions given away', () => {
    const merge = alignment(0);
    merge.expect(2);
    merge.append(0, [1, 2], true);
    merge.reassigned([0, 1]);
    expect(merge.buffered).toEqual([]);
    merge.append(0, [3], true);
    // Partition 2, no longer held, does not block.
    expect(drained(merge)).toEqual([[0, 3]]);
  });

  it('hands on a whole simulated catch-up within the alignment', () => {
    // Three partitions with a backlog of 10, 80 and 300 messages over the same 60 s, read
    // in fetches of up to 50 messages of a partition, the next fetch of a partition only
    // once its buffer is empty, as the source does.
    const alignmentMs = 2000;
    const partitions = [10, 80, 300].map((count) =>
      Array.from({ length: count }, (_, i) => Math.floor((i * 60_000) / count)),
    );
    const fetched = partitions.map(() => 0);
    const merge = alignment(alignmentMs);
    partitions.forEach((_, p) => merge.expect(p));
    const out: [number, number][] = [];
    for (let round = 0; round < 1000 && out.length < 390; round++) {
      for (let p = 0; p < partitions.length; p++) {
        if (merge.hasBuffered(p) || fetched[p] >= partitions[p].length) continue;
        const batch = partitions[p].slice(fetched[p], fetched[p] + 50);
        fetched[p] += batch.length;
        merge.append(p, batch, fetched[p] >= partitions[p].length);
        merge.drain((partition, ts) => {
          out.push([partition, ts]);
          return true;
        });
      }
    }
    expect(out).toHaveLength(390);
    // Every message is at most the alignment ahead of the next message of every other
    // partition still behind, so with this much lateness none of those is late.
    const handed = partitions.map(() => 0);
    for (const [partition, ts] of out) {
      handed[partition]++;
      for (let other = 0; other < partitions.length; other++) {
        if (other !== partition && handed[other] < partitions[other].length) {
          expect(ts - partitions[other][handed[other]]).toBeLessThanOrEqual(alignmentMs);
        }
      }
    }
    // Each partition's messages come in their own order.
    for (let p = 0; p < partitions.length; p++) {
      expect(out.filter(([partition]) => partition === p).map(([, ts]) => ts)).toEqual(
        partitions[p],
      );
    }
  });
});
