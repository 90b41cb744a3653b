import { describe, expect, it } from 'vitest';
import type { PartialSummary, PartitionPart } from '../../src/partials/partial-summary.js';
import { WindowMerge } from '../../src/partials/window-merge.js';

// Source of truth: the counts written into the summaries below are the ground truth; a
// merged window must equal their sum over distinct partitions (arithmetic, by hand).

const windowMs = 10_000;

function part(
  partition: number,
  from: number,
  to: number,
  counts: Record<string, number>,
): PartitionPart {
  const records = Object.values(counts).reduce((sum, count) => sum + count, 0);
  return { partition, from, to, records, late: 0, rejected: {}, counts };
}

function summary(start: number, parts: PartitionPart[], instance = 'a'): PartialSummary {
  return {
    partial: 1,
    instance,
    epoch: 1,
    topic: 'requests',
    sourcePartitions: 3,
    windowMs,
    latenessMs: 0,
    shardFrom: 'field',
    start,
    end: start + windowMs,
    parts,
  };
}

describe('WindowMerge', () => {
  it('releases a window once every partition has sent its part, summing the counts', () => {
    const merge = new WindowMerge({ windowMs, deadlineMs: 60_000 });
    merge.add(summary(0, [part(0, 0, 9, { s1: 2 }), part(1, 0, 4, { s1: 1, s2: 3 })]), 0);
    expect(merge.due(1)).toEqual([]);
    merge.add(summary(0, [part(2, 0, 7, { s3: 5 })], 'b'), 2);
    const [window] = merge.due(3);
    expect(window.start).toBe(0);
    expect(Object.fromEntries(window.counts)).toEqual({ s1: 3, s2: 3, s3: 5 });
    expect(window.total).toBe(11);
    expect(window.coverage).toEqual({
      complete: true,
      partitions: 3,
      missing: [],
      duplicates: 0,
      conflicts: 0,
    });
  });

  it('keeps one part per (window, partition): an overlapping re-send after a rebalance is dropped', () => {
    const merge = new WindowMerge({ windowMs, deadlineMs: 60_000 });
    merge.add(summary(0, [part(0, 0, 9, { s1: 2 }), part(1, 0, 4, { s2: 3 })], 'a'), 0);
    // Instance b took partition 1 over from the last commit (offset 2) and counted it again;
    // its range 2..6 overlaps a's 0..4. Partition 2 is new.
    const outcome = merge.add(
      summary(0, [part(1, 2, 6, { s2: 3 }), part(2, 0, 1, { s3: 1 })], 'b'),
      1,
    );
    expect(outcome).toEqual({ merged: 1, duplicates: 1, afterVerdict: 0 });
    const [window] = merge.due(2);
    expect(window.total).toBe(6);
    expect(window.coverage.duplicates).toBe(1);
    expect(window.coverage.conflicts).toBe(0);
  });

  it('counts a re-sent part with other counts as a conflict and keeps the first', () => {
    const merge = new WindowMerge({ windowMs, deadlineMs: 60_000 });
    merge.add(
      summary(0, [part(0, 0, 9, { s1: 2 }), part(1, 0, 4, { s2: 3 }), part(2, 0, 0, {})]),
      0,
    );
    merge.add(summary(0, [part(0, 5, 12, { s1: 1 })], 'b'), 1);
    // Complete, but not yet released: the re-send for partition 0 still meets the window.
    const [window] = merge.due(2);
    expect(window.total).toBe(5);
    expect(window.coverage.conflicts).toBe(1);
  });

  it('marks a window incomplete after the deadline, naming the missing partitions', () => {
    const merge = new WindowMerge({ windowMs, deadlineMs: 5_000 });
    merge.add(summary(0, [part(1, 0, 3, { s1: 4 })]), 1_000);
    expect(merge.due(5_999)).toEqual([]);
    const [window] = merge.due(6_000);
    expect(window.total).toBe(4);
    expect(window.coverage.complete).toBe(false);
    expect(window.coverage.missing).toEqual([0, 2]);
  });

  it('releases in start order, makes unheard-of windows in a gap, and refuses parts after the verdict', () => {
    const merge = new WindowMerge({ windowMs, deadlineMs: 5_000 });
    const all = (start: number) =>
      summary(
        start,
        [0, 1, 2].map((p) => part(p, 0, 0, { s: 1 })),
      );
    merge.add(all(30_000), 0);
    merge.add(all(0), 0);
    // Windows 0 and 30 s are complete; 10 s and 20 s were never heard of and hold 30 s back.
    expect(merge.due(1).map((w) => w.start)).toEqual([0]);
    const later = merge.due(5_000);
    expect(later.map((w) => [w.start, w.coverage.missing])).toEqual([
      [10_000, [0, 1, 2]],
      [20_000, [0, 1, 2]],
      [30_000, []],
    ]);
    expect(merge.add(all(20_000), 6_000)).toEqual({ merged: 0, duplicates: 0, afterVerdict: 3 });
  });

  it('refuses summaries whose settings differ from the first', () => {
    const merge = new WindowMerge({ windowMs, deadlineMs: 5_000 });
    merge.add(summary(0, [part(0, 0, 0, {})]), 0);
    const other = { ...summary(0, [part(1, 0, 0, {})]), sourcePartitions: 4 };
    expect(merge.add(other, 0).refused).toMatch(/differ/);
    const longer = { ...summary(0, [part(1, 0, 0, {})]), windowMs: 20_000, end: 20_000 };
    expect(merge.add(longer, 0).refused).toMatch(/--window/);
  });

  it('does not make windows at or before the resume point again', () => {
    const merge = new WindowMerge({ windowMs, deadlineMs: 5_000, judgedThrough: 20_000 });
    expect(merge.add(summary(10_000, [part(0, 0, 0, {})]), 0).afterVerdict).toBe(1);
    merge.add(
      summary(
        20_000,
        [0, 1, 2].map((p) => part(p, 0, 0, { s: 1 })),
      ),
      0,
    );
    expect(merge.due(0).map((w) => w.start)).toEqual([20_000]);
  });
});
