import { describe, expect, it, vi } from 'vitest';
import { feedRecords } from '../../src/cli/record-feed.js';
import { PartialCounting } from '../../src/cli/partial-counting.js';
import type { SourceItem } from '../../src/ingest/file-source.js';
import {
  countBatches,
  expectedMarks,
  expectedParts,
  messages,
  partition0,
} from './count-fixture.js';
import type { RecordSource, SourceStart } from '../../src/ingest/record-source.js';
import { PartialCountSink, type ClosedWindowParts } from '../../src/partials/partial-count-sink.js';

// The feed is wrapped, not replaced: the test sees whether count's loop goes through it.
vi.mock('../../src/cli/record-feed.js', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../src/cli/record-feed.js')>();
  return { ...original, feedRecords: vi.fn(original.feedRecords) };
});

/** A two-partition source in fixed batches, judged partition by partition. */
function twoPartitionSource(batches: SourceItem[][]) {
  const marks: { partition: number | undefined; through: number }[] = [];
  const source: RecordSource = {
    label: 'two partitions',
    live: false,
    open: () =>
      Promise.resolve<SourceStart>({ partitions: 2, backlogPartitions: [], judgedThrough: null }),
    async *batches() {
      for (const batch of batches) yield batch;
    },
    close: () => Promise.resolve(),
    markJudgedUpTo: (through, partition) => marks.push({ partition, through }),
    backlogged: () => false,
  };
  return { source, marks };
}

describe("count's loop (PartialCounting)", () => {
  it('feeds the source through the shared record feed: exact parts per partition and window, rejections by reason', async () => {
    const { source, marks } = twoPartitionSource(countBatches());
    const sink = new PartialCountSink({ windowMs: 10_000, latenessMs: 1_000, idleMs: 3_600_000 });
    sink.startPartition(0, 0, Number.NEGATIVE_INFINITY, 0);
    sink.startPartition(1, 0, Number.NEGATIVE_INFINITY, 0);
    const published: { windows: readonly ClosedWindowParts[]; marksBefore: number }[] = [];
    const counting = new PartialCounting(
      source,
      sink,
      (windows) => {
        published.push({ windows, marksBefore: marks.length });
        return Promise.resolve();
      },
      { clock: () => 0, tickMs: 3_600_000 },
    );
    await counting.run();

    expect(feedRecords).toHaveBeenCalledWith(source, expect.anything(), sink, expect.anything());
    expect(published.map((p) => p.windows.map((w) => [w.start, w.end]))).toEqual([
      [[0, 10_000]],
      [
        [0, 10_000],
        [10_000, 20_000],
      ],
      [[10_000, 20_000]],
    ]);
    expect(published.map((p) => p.windows.flatMap((w) => w.parts))).toEqual(expectedParts);
    // Each partition is marked judged through its own last closed window, after the
    // publication that holds it.
    expect(marks).toEqual(expectedMarks);
    expect(published.map((p) => p.marksBefore)).toEqual([0, 1, 2]);
  });

  it('marks nothing until the publication is acknowledged, and nothing for a revoked generation', async () => {
    const { source, marks } = twoPartitionSource([messages(0, partition0.slice(0, 5), 0)]);
    const sink = new PartialCountSink({ windowMs: 10_000, latenessMs: 1_000, idleMs: 3_600_000 });
    sink.startPartition(0, 0, Number.NEGATIVE_INFINITY, 0);
    let acknowledge = (): void => undefined;
    const counting = new PartialCounting(
      source,
      sink,
      () =>
        new Promise<void>((resolve) => {
          acknowledge = resolve;
        }),
      { clock: () => 0, tickMs: 3_600_000 },
    );
    const running = counting.run();
    await vi.waitFor(() => expect(sink.partitions).toEqual([0]));
    await new Promise((resolve) => setTimeout(resolve, 20));
    expect(marks).toEqual([]);
    sink.revokeAll(); // a join while the summary was on its way
    acknowledge();
    await running;
    expect(marks).toEqual([]);
  });
});

describe('PartialCountSink', () => {
  const options = { windowMs: 10_000, latenessMs: 0, idleMs: 5_000 };

  it('drops records of partitions not started (stale after a join) and counts them', () => {
    const sink = new PartialCountSink(options);
    sink.record(1000, 'a', 1, undefined, 3, 40);
    sink.reject('not JSON', undefined, 3, 41);
    expect(sink.unowned).toBe(2);
    sink.startPartition(3, 42, Number.NEGATIVE_INFINITY, 0);
    sink.record(1000, 'a', 1, undefined, 3, 42);
    sink.revokeAll();
    sink.record(11_000, 'a', 1, undefined, 3, 43);
    expect(sink.unowned).toBe(3);
    expect(sink.closeDue(0).windows).toEqual([]);
  });

  it('starts a taken-over partition after its published windows: replayed records dropped', () => {
    // The previous owner published through 20000 and committed offset 7.
    const sink = new PartialCountSink(options);
    sink.startPartition(2, 7, 20_000, 0);
    sink.record(18_000, 'a', 1, undefined, 2, 7);
    sink.record(21_000, 'b', 1, undefined, 2, 8);
    sink.record(45_000, 'b', 1, undefined, 2, 9);
    const due = sink.closeDue(0);
    expect(due.windows.map((w) => [w.start, w.parts[0].records, w.parts[0].from])).toEqual([
      [20_000, 1, 7],
      [30_000, 0, 7],
    ]);
    expect(sink.counterOf(2)?.alreadyCounted).toBe(1);
    expect(due.judged).toEqual([{ partition: 2, through: 40_000 }]);
  });

  it('an idle partition closes on the newest watermark of the others, unless the source says it is behind', () => {
    let behind = true;
    const sink = new PartialCountSink(options);
    sink.setBacklogProbe(() => behind);
    sink.startPartition(0, 0, Number.NEGATIVE_INFINITY, 0);
    sink.startPartition(1, 0, Number.NEGATIVE_INFINITY, 0);
    sink.record(3_000, 'a', 1, undefined, 0, 0);
    sink.record(3_000, 'a', 1, undefined, 1, 0);
    expect(sink.closeDue(1_000).windows).toEqual([]);
    sink.record(35_000, 'a', 1, undefined, 1, 1);
    // Partition 0 has been quiet since 1000: 5 s at 6000.
    expect(sink.closeDue(5_999).windows.map((w) => w.parts.map((p) => p.partition))).toEqual([
      [1],
      [1],
      [1],
    ]);
    expect(sink.closeDue(6_000).windows).toEqual([]); // quiet, but behind
    behind = false;
    expect(sink.closeDue(6_000).windows.map((w) => w.parts.map((p) => p.partition))).toEqual([
      [0],
      [0],
      [0],
    ]);
  });
});
