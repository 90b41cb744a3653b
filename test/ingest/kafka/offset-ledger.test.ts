// Offset bookkeeping without a broker. Expected offsets are worked by hand from the rule
// "commit the lowest offset of a message still in an open window, else highest + 1".
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  OffsetLedger,
  PartitionLedger,
  commitMetadata,
  judgedThroughFromMetadata,
} from '../../../src/ingest/kafka/offset-ledger.js';

describe('OffsetLedger.releaseOf', () => {
  it('is the end of the last window covering the time (tumbling and sliding)', () => {
    const tumbling = new OffsetLedger({ windowMs: 10_000 });
    expect(tumbling.releaseOf(0)).toBe(10_000);
    expect(tumbling.releaseOf(12_345)).toBe(20_000);
    expect(tumbling.releaseOf(19_999)).toBe(20_000);
    expect(tumbling.releaseOf(20_000)).toBe(30_000);
    // Sliding 10 s windows every 2 s: 12 345 is last covered by [12 000, 22 000).
    const sliding = new OffsetLedger({ windowMs: 10_000, hopMs: 2000 });
    expect(sliding.releaseOf(12_345)).toBe(22_000);
  });

  it('refuses a hop that does not divide the window', () => {
    expect(() => new OffsetLedger({ windowMs: 10_000, hopMs: 3000 })).toThrow(
      'hop 3000 ms does not divide the window length 10000 ms',
    );
    expect(() => new OffsetLedger({ windowMs: 0 })).toThrow('window length 0 ms');
  });
});

describe('PartitionLedger', () => {
  it('commits below the first message of a window not yet judged', () => {
    const ledger = new PartitionLedger();
    ledger.startAt(100);
    expect(ledger.commitOffset(Number.NEGATIVE_INFINITY)).toBe(100);
    // Offsets 100-104 in window ending 10 s, 105-107 in window ending 20 s.
    for (let offset = 100; offset <= 104; offset++) ledger.hold(offset, 10_000, -Infinity);
    for (let offset = 105; offset <= 107; offset++) ledger.hold(offset, 20_000, -Infinity);
    expect(ledger.heldRuns).toBe(2);
    expect(ledger.commitOffset(0)).toBe(100);
    expect(ledger.commitOffset(10_000)).toBe(105);
    expect(ledger.commitOffset(20_000)).toBe(108);
    expect(ledger.heldRuns).toBe(0);
  });

  it('keeps a late message inside the run before it: it cannot be passed earlier anyway', () => {
    const ledger = new PartitionLedger();
    ledger.hold(0, 20_000, -Infinity);
    ledger.hold(1, 10_000, -Infinity); // late: an earlier window, but a higher offset
    ledger.hold(2, 30_000, -Infinity);
    expect(ledger.heldRuns).toBe(2);
    expect(ledger.commitOffset(10_000)).toBe(0);
    expect(ledger.commitOffset(20_000)).toBe(2);
  });

  it('releases at once messages whose windows are already judged, and rejected ones', () => {
    const ledger = new PartitionLedger();
    ledger.hold(0, 10_000, 10_000);
    ledger.hold(1, Number.NEGATIVE_INFINITY, 10_000);
    expect(ledger.heldRuns).toBe(0);
    expect(ledger.commitOffset(10_000)).toBe(2);
  });

  it('tells redeliveries by offset: everything at or below the highest processed', () => {
    const ledger = new PartitionLedger();
    ledger.startAt(50);
    expect(ledger.isDuplicate(49)).toBe(true);
    expect(ledger.isDuplicate(50)).toBe(false);
    ledger.hold(50, 10_000, -Infinity);
    ledger.hold(51, 10_000, -Infinity);
    expect(ledger.isDuplicate(51)).toBe(true);
    expect(ledger.isDuplicate(52)).toBe(false);
  });

  it('holds one run per distinct pending window, however many messages (bounded memory)', () => {
    const ledger = new PartitionLedger();
    for (let offset = 0; offset < 100_000; offset++) {
      ledger.hold(offset, 10_000 * (1 + Math.floor(offset / 25_000)), -Infinity);
    }
    expect(ledger.heldRuns).toBe(4);
  });

  it('agrees with a direct scan of every message, for random windows and judging (property)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.record({ window: fc.integer({ min: 0, max: 6 }), judge: fc.boolean() }), {
          minLength: 1,
          maxLength: 200,
        }),
        (steps) => {
          const ledger = new PartitionLedger();
          const releases: number[] = [];
          let judged = Number.NEGATIVE_INFINITY;
          steps.forEach(({ window, judge }, offset) => {
            const release = (window + 1) * 10_000;
            ledger.hold(offset, release, judged);
            releases.push(release);
            if (judge) judged = Math.max(judged, release - 10_000);
            const open = releases.findIndex((r) => r > judged);
            const expected = open < 0 ? releases.length : open;
            expect(ledger.commitOffset(judged)).toBe(expected);
          });
        },
      ),
    );
  });
});

describe('OffsetLedger', () => {
  it('commits every started partition, judged watermark shared and never moving back', () => {
    const ledger = new OffsetLedger({ windowMs: 10_000 });
    ledger.partition(1).startAt(7);
    ledger.partition(0).hold(0, 10_000, ledger.judgedThrough);
    ledger.partition(0).hold(1, 20_000, ledger.judgedThrough);
    ledger.markJudgedUpTo(10_000);
    ledger.markJudgedUpTo(5000);
    expect(ledger.judgedThrough).toBe(10_000);
    expect(ledger.commitOffsets()).toEqual([
      { partition: 0, offset: 1 },
      { partition: 1, offset: 7 },
    ]);
  });
});

describe('commit metadata', () => {
  it('round-trips the judged window end and ignores anything else', () => {
    expect(commitMetadata(1_764_583_210_000)).toBe('shardwise judged-through=1764583210000');
    expect(judgedThroughFromMetadata('shardwise judged-through=1764583210000')).toBe(
      1_764_583_210_000,
    );
    expect(commitMetadata(Number.NEGATIVE_INFINITY)).toBeNull();
    expect(judgedThroughFromMetadata(null)).toBe(Number.NEGATIVE_INFINITY);
    expect(judgedThroughFromMetadata('')).toBe(Number.NEGATIVE_INFINITY);
    expect(judgedThroughFromMetadata('other-tool v2')).toBe(Number.NEGATIVE_INFINITY);
  });
});
