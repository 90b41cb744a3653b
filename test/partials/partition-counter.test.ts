import { describe, expect, it } from 'vitest';
import { PartitionLedger } from '../../src/ingest/kafka/offset-ledger.js';
import { PartitionCounter } from '../../src/partials/partition-counter.js';

// Source of truth: the records fed in below; each window's part must hold exactly the
// records whose timestamps fall in it (arithmetic, by hand). Where the partition may be
// committed is kept by count's source in a PartitionLedger (message offset, end of its
// window); the checks beside show it stops at the first record of a window still open.

/** The ledger of count's source after the same messages (window end = release). */
function ledgerOf(start: number, messages: [offset: number, release: number][], judged: number) {
  const ledger = new PartitionLedger();
  ledger.startAt(start);
  for (const [offset, release] of messages) ledger.hold(offset, release, judged);
  return ledger;
}

function feed(counter: PartitionCounter, messages: [offset: number, ts: number, shard: string][]) {
  for (const [offset, ts, shard] of messages) {
    counter.offset = offset;
    counter.record(ts, shard, 1);
    counter.processed(offset);
  }
}

describe('PartitionCounter', () => {
  it('closes windows on its own watermark, empty ones included', () => {
    const counter = new PartitionCounter(4, { windowMs: 10, latenessMs: 5 }, 100);
    feed(counter, [
      [100, 1, 'a'],
      [101, 8, 'b'],
      [102, 12, 'a'],
    ]);
    expect(counter.closeDue()).toEqual([]);
    feed(counter, [[103, 37, 'a']]);
    const parts = counter.closeDue();
    expect(parts.map((p) => [p.start, p.records, p.counts, p.from, p.to])).toEqual([
      [0, 2, { a: 1, b: 1 }, 100, 103],
      [10, 1, { a: 1 }, 100, 103],
      [20, 0, {}, 100, 103],
    ]);
    // The record at offset 103 is in the open window 30..40: commit no further.
    expect(counter.closedThrough).toBe(30);
    const ledger = ledgerOf(
      100,
      [
        [100, 10],
        [101, 10],
        [102, 20],
        [103, 40],
      ],
      -Infinity,
    );
    expect(ledger.commitOffset(counter.closedThrough)).toBe(103);
  });

  it('counts a record for a closed window as late, not in any part', () => {
    const counter = new PartitionCounter(0, { windowMs: 10, latenessMs: 0 }, 0);
    feed(counter, [
      [0, 1, 'a'],
      [1, 15, 'a'],
    ]);
    expect(counter.closeDue().map((p) => p.records)).toEqual([1]);
    feed(counter, [
      [2, 3, 'a'],
      [3, 25, 'a'],
    ]);
    const [part] = counter.closeDue();
    expect([part.start, part.records, part.late, part.rejected]).toEqual([
      10,
      1,
      1,
      { 'too late': 1 },
    ]);
  });

  it('after a takeover drops replayed records of windows already published, and starts after them', () => {
    // The previous owner published through 20 and committed offset 7.
    const counter = new PartitionCounter(2, { windowMs: 10, latenessMs: 0 }, 7, 20);
    feed(counter, [
      [7, 18, 'a'],
      [8, 21, 'b'],
      [9, 45, 'b'],
    ]);
    const parts = counter.closeDue();
    expect(parts.map((p) => [p.start, p.records, p.late])).toEqual([
      [20, 1, 0],
      [30, 0, 0],
    ]);
    expect(counter.alreadyCounted).toBe(1);
    const ledger = ledgerOf(
      7,
      [
        [7, 20],
        [8, 30],
        [9, 50],
      ],
      20,
    );
    expect(ledger.commitOffset(counter.closedThrough)).toBe(9);
  });

  it('a caught-up idle partition closes on a watermark handed in', () => {
    const counter = new PartitionCounter(1, { windowMs: 10, latenessMs: 0 }, 0);
    feed(counter, [[0, 3, 'a']]);
    expect(counter.closeDue()).toEqual([]);
    expect(counter.closeDue(20).map((p) => p.start)).toEqual([0, 10]);
    expect(ledgerOf(0, [[0, 10]], -Infinity).commitOffset(counter.closedThrough)).toBe(1);
  });
});

describe('PartitionCounter: shard ids from the wire', () => {
  it('a shard called __proto__ is counted like any other', () => {
    // On a plain object, counts['__proto__'] = n sets the prototype and drops the count.
    const counter = new PartitionCounter(0, { windowMs: 10, latenessMs: 0 }, 0);
    feed(counter, [
      [0, 1, '__proto__'],
      [1, 2, '__proto__'],
      [2, 3, 'a'],
      [3, 25, 'a'],
    ]);
    const [part] = counter.closeDue();
    expect(Object.entries(part.counts)).toEqual([
      ['__proto__', 2],
      ['a', 1],
    ]);
  });
});
