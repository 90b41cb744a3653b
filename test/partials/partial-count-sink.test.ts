import { describe, expect, it } from 'vitest';
import { PartialCountSink } from '../../src/partials/partial-count-sink.js';

// Source of truth: the records fed in below and the contract in the doc comments of
// src/partials/partial-count-sink.ts; each window's expected part is worked out by hand
// (a record at ts t lies in the window starting at floor(t / 10) * 10).

const options = { windowMs: 10, latenessMs: 0, idleMs: 1000 };

describe('PartialCountSink', () => {
  it('refuses an idle time that is not a whole number above zero', () => {
    expect(() => new PartialCountSink({ ...options, idleMs: 0 })).toThrow(
      'idle time 0 ms is not a whole number above zero',
    );
    expect(() => new PartialCountSink({ ...options, idleMs: 1.5 })).toThrow(
      'idle time 1.5 ms is not a whole number above zero',
    );
  });

  it('drops records and rejections of partitions not started, counting them as unowned', () => {
    const sink = new PartialCountSink(options);
    sink.record(1, 'a', 1, undefined, 3, 50);
    sink.reject('not JSON', undefined, 3, 51);
    expect(sink.unowned).toBe(2);
    expect(sink.partitions).toEqual([]);
    expect(sink.closeDue(0)).toEqual({ generation: 0, windows: [], judged: [] });
  });

  it('closes each partition on its own watermark and groups parts by window', () => {
    const sink = new PartialCountSink(options);
    sink.startPartition(2, 100, Number.NEGATIVE_INFINITY, 0);
    sink.startPartition(0, 40, Number.NEGATIVE_INFINITY, 0);
    expect(sink.partitions).toEqual([0, 2]);
    sink.record(3, 'a', 2, 'k', 2, 100);
    sink.reject('wrong type', undefined, 2, 101);
    sink.record(12, 'b', 1, undefined, 2, 102);
    sink.record(5, 'c', 4, undefined, 0, 40);
    sink.record(9, 'c', 1, undefined, 0, 41);
    // Partition 2's watermark is 12: window 0..10 closes there; partition 0's (9) closes nothing.
    const due = sink.closeDue(10);
    expect(due).toEqual({
      generation: 0,
      windows: [
        {
          start: 0,
          end: 10,
          parts: [
            {
              partition: 2,
              from: 100,
              to: 102,
              records: 1,
              late: 0,
              rejected: { 'wrong type': 1 },
              counts: { a: 2 },
            },
          ],
        },
      ],
      judged: [{ partition: 2, through: 10 }],
    });
    sink.record(10, 'c', 1, undefined, 0, 42);
    const next = sink.closeDue(20);
    expect(next.windows.map((w) => [w.start, w.parts.map((p) => [p.partition, p.counts])])).toEqual(
      [[0, [[0, { c: 5 }]]]],
    );
    expect(next.judged).toEqual([{ partition: 0, through: 10 }]);
    expect(sink.counterOf(0)?.highestProcessed).toBe(42);
  });

  it('closes an idle partition that is not behind on the newest watermark of the others', () => {
    const sink = new PartialCountSink(options);
    sink.startPartition(0, 0, Number.NEGATIVE_INFINITY, 0);
    sink.startPartition(1, 0, Number.NEGATIVE_INFINITY, 0);
    sink.record(1, 'a', 1, undefined, 0, 0);
    sink.record(2, 'b', 1, undefined, 1, 0);
    sink.record(25, 'a', 1, undefined, 0, 1);
    // Both delivered at 500: not idle yet; partition 0 closes 0..10 and 10..20 on its own.
    let due = sink.closeDue(500);
    expect(due.judged).toEqual([{ partition: 0, through: 20 }]);
    // Partition 1 heard nothing since 500; at 1499 it is not yet idle.
    expect(sink.closeDue(1499).windows).toEqual([]);
    let behind = true;
    sink.setBacklogProbe((partition) => partition === 1 && behind);
    expect(sink.closeDue(1500).windows).toEqual([]);
    behind = false;
    due = sink.closeDue(1500);
    expect(due.windows.map((w) => [w.start, w.parts.map((p) => [p.partition, p.counts])])).toEqual([
      [0, [[1, { b: 1 }]]],
      [10, [[1, {}]]],
    ]);
    expect(due.judged).toEqual([{ partition: 1, through: 20 }]);
  });

  it('a revocation drops everything counted and makes earlier generations stale', () => {
    const sink = new PartialCountSink(options);
    sink.startPartition(0, 0, Number.NEGATIVE_INFINITY, 0);
    sink.record(1, 'a', 1, undefined, 0, 0);
    const before = sink.closeDue(0).generation;
    expect(sink.isCurrent(before)).toBe(true);
    sink.revokeAll();
    expect(sink.isCurrent(before)).toBe(false);
    expect(sink.partitions).toEqual([]);
    sink.record(30, 'a', 1, undefined, 0, 1);
    expect(sink.unowned).toBe(1);
    const after = sink.closeDue(0);
    expect(after).toEqual({ generation: 1, windows: [], judged: [] });
    expect(sink.isCurrent(after.generation)).toBe(true);
  });

  it('a partition started after publishing drops replayed records of published windows', () => {
    const sink = new PartialCountSink(options);
    sink.startPartition(0, 7, 20, 0);
    sink.record(15, 'a', 1, undefined, 0, 7);
    sink.record(21, 'a', 1, undefined, 0, 8);
    sink.record(35, 'a', 1, undefined, 0, 9);
    expect(sink.counterOf(0)?.alreadyCounted).toBe(1);
    const due = sink.closeDue(0);
    expect(due.windows.map((w) => [w.start, w.parts[0]?.counts, w.parts[0]?.from])).toEqual([
      [20, { a: 1 }, 7],
    ]);
    expect(due.judged).toEqual([{ partition: 0, through: 30 }]);
  });
});
