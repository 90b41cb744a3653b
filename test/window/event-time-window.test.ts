import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { UsageError } from '../../src/errors/usage-error.js';
import {
  EventTimeWindows,
  type ClosedWindow,
  type WindowOptions,
} from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

// 2025-12-01T10:00:00Z, a multiple of 10 s, so window k of 10 s starts at base + 10 s x k.
const base = Date.UTC(2025, 11, 1, 10);
const second = 1000;

function shards(...ids: string[]): ShardUniverse {
  return ShardUniverse.fromIds(ids);
}

function collect(universe: ShardUniverse, options: WindowOptions) {
  const closed: ClosedWindow[] = [];
  const windows = new EventTimeWindows(universe, options, (window) => closed.push(window));
  return { windows, closed };
}

function offsets(closed: ClosedWindow[]): number[] {
  return closed.map((window) => (window.start - base) / second);
}

describe('tumbling event-time windows', () => {
  it('aligns windows to multiples of their length since the epoch', () => {
    // Worked by hand: 10:00:05Z lies in [10:00:00Z, 10:00:10Z) for 10 s windows.
    const { windows, closed } = collect(shards('a', 'b'), { windowMs: 10 * second });
    windows.add(base + 5 * second, 'a', 1);
    windows.closeAll();
    expect(closed).toHaveLength(1);
    expect(closed[0].start).toBe(Date.parse('2025-12-01T10:00:00Z'));
    expect(closed[0].end).toBe(Date.parse('2025-12-01T10:00:10Z'));
  });

  it('counts per shard and closes a window once the watermark reaches its end', () => {
    const { windows, closed } = collect(shards('a', 'b'), { windowMs: 10 * second });
    windows.add(base + 1 * second, 'a', 1);
    windows.add(base + 5 * second, 'b', 2);
    windows.add(base + 9 * second, 'b', 3);
    expect(closed).toHaveLength(0);
    // Lateness 0: the watermark is the newest ts, 10 s reaches window 0's end exactly.
    windows.add(base + 10 * second, 'a', 4);
    expect(closed).toHaveLength(1);
    expect([...closed[0].counts]).toEqual([1, 5]);
    expect(closed[0].total).toBe(6);
    expect(closed[0].late).toBe(0);
    expect(closed[0].rejected).toEqual({});
    windows.closeAll();
    expect([...closed[1].counts]).toEqual([4, 0]);
    expect(windows.totals).toMatchObject({ records: 4, load: 10, late: 0, windowsClosed: 2 });
  });

  it('adds up duplicated timestamps', () => {
    const { windows, closed } = collect(shards('a'), { windowMs: 10 * second });
    for (let copy = 0; copy < 5; copy++) windows.add(base + 3 * second, 'a', 7);
    windows.closeAll();
    expect([...closed[0].counts]).toEqual([35]);
  });

  it('keeps out-of-order records within the lateness and counts later ones as late', () => {
    const { windows, closed } = collect(shards('a', 'b'), {
      windowMs: 10 * second,
      latenessMs: 2 * second,
    });
    windows.add(base + 9 * second, 'a', 1);
    windows.add(base + 11 * second, 'b', 1);
    // Watermark 11 - 2 = 9 s < 10 s: window 0 is still open for this out-of-order record.
    windows.add(base + 8 * second, 'b', 10);
    expect(windows.watermark).toBe(base + 9 * second);
    windows.add(base + 12.5 * second, 'a', 1);
    expect(closed).toHaveLength(1);
    expect([...closed[0].counts]).toEqual([1, 10]);
    // Window 0 has closed: 100 units at 9.5 s are late, never dropped silently.
    windows.add(base + 9.5 * second, 'a', 100);
    windows.closeAll();
    expect(closed).toHaveLength(2);
    expect([...closed[1].counts]).toEqual([1, 1]);
    expect(closed[1].late).toBe(100);
    expect(closed[1].rejected).toEqual({ 'too late': 1 });
    expect(windows.totals).toMatchObject({
      late: 100,
      lateRecords: 1,
      rejected: { 'too late': 1 },
    });
  });

  it('treats a record before the first window as late once the watermark passed its end', () => {
    // Lateness 0, first record at 10 s: window [0, 10) ended at the watermark, so it never opens.
    const { windows, closed } = collect(shards('a'), { windowMs: 10 * second });
    windows.add(base + 10 * second, 'a', 1);
    windows.add(base + 9 * second, 'a', 1);
    windows.closeAll();
    expect(offsets(closed)).toEqual([10]);
    expect(closed[0].late).toBe(1);
  });

  it('opens an earlier window for an out-of-order record before any window closed', () => {
    // Lateness 5 s, first record at 12 s: watermark 7 s < 10 s, so window [0, 10) may still open.
    const { windows, closed } = collect(shards('a'), {
      windowMs: 10 * second,
      latenessMs: 5 * second,
    });
    windows.add(base + 12 * second, 'a', 1);
    windows.add(base + 3 * second, 'a', 2);
    windows.closeAll();
    expect(offsets(closed)).toEqual([0, 10]);
    expect(closed.map((window) => window.total)).toEqual([2, 1]);
  });

  it('closes the quiet windows between two seen windows as all-zero windows', () => {
    const { windows, closed } = collect(shards('a', 'b'), { windowMs: 10 * second });
    windows.add(base + 1 * second, 'a', 1);
    windows.add(base + 35 * second, 'b', 1);
    expect(offsets(closed)).toEqual([0, 10, 20]);
    expect([...closed[1].counts]).toEqual([0, 0]);
    expect(closed[2].total).toBe(0);
    windows.closeAll();
    expect(offsets(closed)).toEqual([0, 10, 20, 30]);
  });

  it('skips a quiet stretch longer than the cap whole and reports it as a gap', () => {
    // Worked by hand: records at 0 s and 60 s leave windows 10..50 s (5 windows) quiet; the
    // cap is 2, so none of them is judged and the window at 60 s carries the gap.
    const { windows, closed } = collect(shards('a'), {
      windowMs: 10 * second,
      maxQuietWindows: 2,
    });
    windows.add(base, 'a', 1);
    windows.add(base + 60 * second, 'a', 1);
    windows.closeAll();
    expect(offsets(closed)).toEqual([0, 60]);
    expect(closed[0].gapBefore).toBeUndefined();
    expect(closed[1].gapBefore).toEqual({
      start: base + 10 * second,
      end: base + 60 * second,
      windows: 5,
    });
    expect(windows.totals.quietWindowsSkipped).toBe(5);
    expect(windows.totals.gapCount).toBe(1);
    expect(windows.totals.gaps).toEqual([closed[1].gapBefore]);
  });

  it('closes a quiet stretch within the cap one empty window at a time', () => {
    const { windows, closed } = collect(shards('a'), {
      windowMs: 10 * second,
      maxQuietWindows: 5,
    });
    windows.add(base, 'a', 1);
    windows.add(base + 60 * second, 'a', 1);
    windows.closeAll();
    expect(offsets(closed)).toEqual([0, 10, 20, 30, 40, 50, 60]);
    expect(closed.some((window) => window.gapBefore !== undefined)).toBe(false);
    expect(windows.totals.gapCount).toBe(0);
  });

  it('judges a clock jump of a year as one gap, not ten thousand empty windows', () => {
    // Measured on main before the fix: a jump closed 10 000 empty windows one by one and
    // skipped the rest. The default cap (360 windows, an hour of 10 s windows) applies.
    const { windows, closed } = collect(shards('a'), { windowMs: 10 * second });
    windows.add(base, 'a', 1);
    windows.add(base + 365 * 86_400 * second, 'a', 1);
    windows.closeAll();
    expect(closed).toHaveLength(2);
    expect(closed[1].gapBefore?.windows).toBe(365 * 8640 - 1);
  });

  it('closes by wall clock when a live source goes quiet, then counts stragglers as late', () => {
    const { windows, closed } = collect(shards('a'), {
      windowMs: 10 * second,
      latenessMs: 2 * second,
    });
    windows.closeDue(base + 100 * second);
    expect(closed).toHaveLength(0);
    windows.add(base + 1 * second, 'a', 1);
    windows.closeDue(base + 11.999 * second);
    expect(closed).toHaveLength(0);
    // Window 0 ends at 10 s; with 2 s lateness it is due at 12 s of wall clock.
    windows.closeDue(base + 12 * second);
    expect(offsets(closed)).toEqual([0]);
    // By 35 s, windows ending at or before 33 s are due: [10, 20) and [20, 30), both empty.
    windows.closeDue(base + 35 * second);
    expect(offsets(closed)).toEqual([0, 10, 20]);
    windows.add(base + 15 * second, 'a', 4);
    windows.add(base + 31 * second, 'a', 1);
    windows.closeAll();
    expect(offsets(closed)).toEqual([0, 10, 20, 30]);
    expect(closed[3].late).toBe(4);
    expect(closed[3].total).toBe(1);
  });

  it('keeps closing quiet windows after the last record when the wall clock moves on', () => {
    const { windows, closed } = collect(shards('a'), { windowMs: 10 * second });
    windows.add(base + 1 * second, 'a', 1);
    windows.closeDue(base + 10 * second);
    windows.closeDue(base + 30 * second);
    windows.add(base + 45 * second, 'a', 1);
    windows.closeAll();
    expect(offsets(closed)).toEqual([0, 10, 20, 30, 40]);
    expect(closed.map((window) => window.total)).toEqual([1, 0, 0, 0, 1]);
  });

  it('reports rejections by reason in the next closed window and in the totals', () => {
    const { windows, closed } = collect(shards('a'), { windowMs: 10 * second });
    windows.add(base, 'zzz', 1);
    windows.reject('not JSON');
    windows.reject('not JSON');
    windows.add(base, 'a', 1);
    windows.closeAll();
    expect(closed[0].rejected).toEqual({ 'outside universe': 1, 'not JSON': 2 });
    windows.reject('wrong type');
    expect(windows.totals.rejected).toEqual({
      'outside universe': 1,
      'not JSON': 2,
      'wrong type': 1,
    });
    expect(windows.totals.records).toBe(1);
  });
});

describe('windows over a growing universe', () => {
  it('sizes each closed count vector to the universe at close time', () => {
    const { windows, closed } = collect(ShardUniverse.growing(), { windowMs: 10 * second });
    windows.add(base + 1 * second, 'a', 1);
    windows.add(base + 2 * second, 'b', 2);
    // 'c' is admitted before window 0 closes, so window 0 has three counts.
    windows.add(base + 11 * second, 'c', 3);
    windows.closeAll();
    expect([...closed[0].counts]).toEqual([1, 2, 0]);
    expect([...closed[1].counts]).toEqual([0, 0, 3]);
  });

  it('grows an open window past its first allocation', () => {
    const { windows, closed } = collect(ShardUniverse.growing(), { windowMs: 10 * second });
    for (let shard = 0; shard < 300; shard++) windows.add(base + 1 * second, `s-${shard}`, shard);
    windows.closeAll();
    expect(closed[0].counts.length).toBe(300);
    expect(closed[0].counts[299]).toBe(299);
    // 0 + 1 + ... + 299 = 299 x 300 / 2.
    expect(closed[0].total).toBe(44_850);
  });

  it('rejects shards past --max-shards as "too many shards"', () => {
    const { windows, closed } = collect(ShardUniverse.growing({ maxShards: 2 }), {
      windowMs: 10 * second,
    });
    windows.add(base, 'a', 1);
    windows.add(base, 'b', 1);
    windows.add(base, 'c', 1);
    windows.closeAll();
    expect(closed[0].counts.length).toBe(2);
    expect(closed[0].rejected).toEqual({ 'too many shards': 1 });
  });
});

describe('hopping (sliding) windows', () => {
  it('counts a record in every window that covers it', () => {
    // 10 s windows every 5 s: 7 s lies in [0, 10) and [5, 15).
    const { windows, closed } = collect(shards('a'), {
      windowMs: 10 * second,
      hopMs: 5 * second,
    });
    windows.add(base + 7 * second, 'a', 1);
    windows.add(base + 12 * second, 'a', 10);
    windows.closeAll();
    expect(
      closed.map((window) => [
        (window.start - base) / second,
        (window.end - base) / second,
        window.total,
      ]),
    ).toEqual([
      [0, 10, 1],
      [5, 15, 11],
      [10, 20, 10],
    ]);
  });

  it('counts a record that missed one covering window as late but keeps it in the open one', () => {
    const { windows, closed } = collect(shards('a'), {
      windowMs: 10 * second,
      hopMs: 5 * second,
    });
    windows.add(base + 7 * second, 'a', 1);
    windows.add(base + 12 * second, 'a', 1);
    // [0, 10) closed at watermark 12 s; 8 s still belongs to the open [5, 15).
    windows.add(base + 8 * second, 'a', 5);
    windows.closeAll();
    const fiveToFifteen = closed.find(
      (window) => window.start === base + 5 * second,
    ) as ClosedWindow;
    expect(fiveToFifteen.total).toBe(7);
    expect(windows.totals).toMatchObject({ late: 5, lateRecords: 1, rejected: {} });
  });
});

describe('window options', () => {
  it('are validated when built, naming the option', () => {
    const universe = shards('a');
    const build = (options: WindowOptions) => () =>
      new EventTimeWindows(universe, options, () => {});
    expect(build({ windowMs: 0 })).toThrow(UsageError);
    expect(build({ windowMs: 0 })).toThrow(
      '--window: "0ms" is not a whole number of milliseconds above zero',
    );
    expect(build({ windowMs: 10_000, hopMs: 3000 })).toThrow(
      '--hop: "3000ms" does not divide --window 10000ms',
    );
    expect(build({ windowMs: 10_000, hopMs: 20_000 })).toThrow('does not divide');
    expect(build({ windowMs: 10_000, latenessMs: -1 })).toThrow('--lateness: "-1ms"');
    expect(build({ windowMs: 1.5 })).toThrow('--window');
  });
});

describe('conservation of load (property)', () => {
  it('counts every unit once: in exactly one closed window or as late', () => {
    // Common practice for stream aggregation: nothing is lost or counted twice.
    fc.assert(
      fc.property(
        fc.array(
          fc.record({
            offset: fc.integer({ min: 0, max: 120_000 }),
            shard: fc.constantFrom('a', 'b', 'c', 'outsider'),
            count: fc.integer({ min: 0, max: 50 }),
          }),
          { maxLength: 300 },
        ),
        fc.integer({ min: 0, max: 30_000 }),
        (records, latenessMs) => {
          const { windows, closed } = collect(shards('a', 'b', 'c'), {
            windowMs: 10_000,
            latenessMs,
          });
          let inside = 0;
          for (const record of records) {
            windows.add(base + record.offset, record.shard, record.count);
            if (record.shard !== 'outsider') inside += record.count;
          }
          windows.closeAll();
          const windowed = closed.reduce((sum, window) => sum + window.total, 0);
          const late = closed.reduce((sum, window) => sum + window.late, 0);
          expect(windowed + windows.totals.late).toBe(inside);
          expect(late).toBeLessThanOrEqual(windows.totals.late);
          // Windows come out in start order, one hop apart, with no gaps.
          closed.forEach((window, index) => {
            if (index > 0) expect(window.start - closed[index - 1].start).toBe(10_000);
            expect(window.total).toBe(window.counts.reduce((sum, value) => sum + value, 0));
          });
        },
      ),
      { numRuns: 300, seed: 20251201 },
    );
  });
});

describe('event time per source partition', () => {
  const tumbling = { windowMs: 10 * second };

  it('never counts a record late that is in order within its partition', () => {
    // Partition 1 runs a minute ahead of partition 0 in the order they are read (a backlog
    // fetched partition by partition); the watermark is the slower partition's time.
    const { windows, closed } = collect(shards('a', 'b'), tumbling);
    windows.expectPartition(0);
    windows.expectPartition(1);
    for (let at = 0; at < 60; at += 5) windows.add(base + at * second, 'b', 1, 1);
    expect(closed).toHaveLength(0);
    for (let at = 0; at < 60; at += 5) windows.add(base + at * second, 'a', 2, 0);
    windows.closeAll();
    expect(windows.totals.lateRecords).toBe(0);
    expect(closed.map((window) => [...window.counts])).toEqual(
      Array.from({ length: 6 }, () => [4, 2]),
    );
  });

  it('gives the counts of a file read in order, for any interleaving of in-order partitions', () => {
    // Property (invented data): records split over partitions, each partition in time
    // order, read in any interleaving, give the same windows as one sorted stream.
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.integer({ min: 0, max: 3 }), fc.integer({ min: 0, max: 200 })), {
          minLength: 1,
          maxLength: 120,
        }),
        fc.array(fc.integer({ min: 0, max: 3 }), { minLength: 1, maxLength: 400 }),
        (entries, order) => {
          const byPartition: number[][] = [[], [], [], []];
          for (const [partition, at] of entries) byPartition[partition].push(at);
          for (const list of byPartition) list.sort((x, y) => x - y);
          const sorted = collect(shards('a'), tumbling);
          for (const at of [...entries.map(([, at]) => at)].sort((x, y) => x - y)) {
            sorted.windows.add(base + at * second, 'a', 1);
          }
          sorted.windows.closeAll();
          const mixed = collect(shards('a'), tumbling);
          // As a Kafka source does for partitions with a backlog at start.
          for (let partition = 0; partition < 4; partition++) {
            if (byPartition[partition].length > 0) mixed.windows.expectPartition(partition);
          }
          const next = [0, 0, 0, 0];
          let step = 0;
          for (;;) {
            const left = [0, 1, 2, 3].filter((p) => next[p] < byPartition[p].length);
            if (left.length === 0) break;
            const partition = left[order[step++ % order.length] % left.length];
            mixed.windows.add(
              base + byPartition[partition][next[partition]++] * second,
              'a',
              1,
              partition,
            );
          }
          mixed.windows.closeAll();
          expect(mixed.windows.totals.lateRecords).toBe(0);
          expect(mixed.closed.map((w) => [w.start, w.total])).toEqual(
            sorted.closed.map((w) => [w.start, w.total]),
          );
        },
      ),
    );
  });

  it('holds windows open for an expected partition until it reports or goes idle', () => {
    const { windows, closed } = collect(shards('a'), tumbling);
    windows.expectPartition(1);
    windows.add(base + 35 * second, 'a', 1, 0);
    expect(closed).toHaveLength(0);
    expect(windows.watermark).toBe(Number.NEGATIVE_INFINITY);
    windows.add(base + 12 * second, 'a', 1, 1);
    // The watermark is partition 1's 12 s: the window at 10 s stays open.
    expect(windows.watermark).toBe(base + 12 * second);
    expect(offsets(closed)).toEqual([]);
    expect(windows.markIdle(1)).toBe(true);
    // Partition 1 idle: partition 0 alone moves the watermark to 35 s.
    expect(offsets(closed)).toEqual([10, 20]);
    expect(windows.idlePartitions).toEqual([1]);
    // It delivers again: active again, and what it sends for closed windows is late.
    windows.add(base + 15 * second, 'a', 4, 1);
    expect(windows.idlePartitions).toEqual([]);
    expect(windows.totals.lateRecords).toBe(1);
    expect(windows.totals.lateByPartition.get(1)).toBe(1);
    expect(windows.totals.lateByPartition.get(0)).toBeUndefined();
    // Late because partition 0 moved on while it was idle, not by its own order (15 s is
    // its newest yet)...
    expect(windows.totals.outOfOrderByPartition.size).toBe(0);
    // ...while 11 s after its own 15 s is disorder within the partition.
    windows.add(base + 11 * second, 'a', 1, 1);
    expect(windows.totals.lateByPartition.get(1)).toBe(2);
    expect([...windows.totals.outOfOrderByPartition]).toEqual([[1, 1]]);
  });

  it('never moves the watermark back when a slow partition returns from idle', () => {
    const { windows } = collect(shards('a'), tumbling);
    windows.expectPartition(1);
    windows.add(base + 50 * second, 'a', 1, 0);
    windows.add(base + 10 * second, 'a', 1, 1);
    expect(windows.watermark).toBe(base + 10 * second);
    windows.markIdle(1);
    expect(windows.watermark).toBe(base + 50 * second);
    windows.add(base + 11 * second, 'a', 1, 1);
    expect(windows.watermark).toBe(base + 50 * second);
  });
});
