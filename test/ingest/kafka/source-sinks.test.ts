import { describe, expect, it } from 'vitest';
import type { SourceItem } from '../../../src/ingest/file-source.js';
import { OffsetLedger } from '../../../src/ingest/kafka/offset-ledger.js';
import { ItemCollector, ReleaseTracker } from '../../../src/ingest/kafka/source-sinks.js';
import type { RejectionReason } from '../../../src/window/count-record.js';

// Source of truth: the doc comments of src/ingest/kafka/source-sinks.ts; the release of a
// record at ts is the end of its last covering window, floor(ts / hop) * hop + window
// (OffsetLedger.releaseOf), worked out by hand for the literals below.

describe('ReleaseTracker', () => {
  it('passes records on and keeps the latest window end they need judged', () => {
    const passed: unknown[] = [];
    const tracker = new ReleaseTracker(new OffsetLedger({ windowMs: 10_000, hopMs: 5_000 }));
    tracker.target = {
      record: (ts, shard, count, key) => passed.push([ts, shard, count, key]),
      reject: (reason: RejectionReason) => passed.push(reason),
    };
    tracker.record(12_000, 'a', 2, 'k');
    expect(tracker.latestRelease).toBe(20_000);
    tracker.record(4_000, 'b', 1, undefined);
    expect(tracker.latestRelease).toBe(20_000);
    tracker.reject('wrong type');
    expect(passed).toEqual([[12_000, 'a', 2, 'k'], [4_000, 'b', 1, undefined], 'wrong type']);
  });

  it('drops records whose windows a previous run judged, counting them', () => {
    const passed: number[] = [];
    const tracker = new ReleaseTracker(new OffsetLedger({ windowMs: 10_000 }));
    tracker.target = { record: (ts) => passed.push(ts), reject() {} };
    tracker.resumeFloor = 20_000;
    tracker.record(19_999, 'a', 1, undefined);
    tracker.record(20_000, 'a', 1, undefined);
    expect(passed).toEqual([20_000]);
    expect(tracker.alreadyJudged).toBe(1);
    expect(tracker.latestRelease).toBe(30_000);
  });
});

describe('ItemCollector', () => {
  it('tags records with the partition being decoded, a key only where there is one', () => {
    let batch: SourceItem[] = [];
    const collector = new ItemCollector(() => batch);
    collector.partition = 3;
    collector.record(5, 'a', 1, undefined);
    collector.record(6, 'b', 2, 'user-1');
    collector.reject('not JSON');
    expect(batch).toEqual([
      { ts: 5, shard: 'a', count: 1, partition: 3 },
      { ts: 6, shard: 'b', count: 2, key: 'user-1', partition: 3 },
      { reason: 'not JSON' },
    ]);
    expect('key' in batch[0]).toBe(false);
    batch = [];
    collector.partition = 0;
    collector.record(7, 'c', 1, undefined);
    expect(batch).toEqual([{ ts: 7, shard: 'c', count: 1, partition: 0 }]);
  });
});
