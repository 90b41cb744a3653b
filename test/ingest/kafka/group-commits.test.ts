import type { Consumer } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import type { KafkaSourceEvent } from '../../../src/ingest/kafka/events.js';
import { GroupCommits } from '../../../src/ingest/kafka/group-commits.js';
import { OffsetLedger } from '../../../src/ingest/kafka/offset-ledger.js';

// A fake of the kafkajs 2.2.4 consumer's commitOffsets (offsets as decimal strings, with
// optional metadata: kafkajs docs, "Consuming Messages: Manual committing"); the offsets
// expected follow the ledger's rule (commit below the first message of a window still
// open), worked out by hand for the literal messages below. Metadata text from
// commitMetadata in src/ingest/kafka/offset-ledger.ts.

type Commit = { topic: string; partition: number; offset: string; metadata: string | null }[];

function consumer(commits: Commit[], fail?: Error): Consumer {
  return {
    commitOffsets: async (offsets: Commit) => {
      if (fail !== undefined) throw fail;
      commits.push(offsets);
    },
  } as unknown as Consumer;
}

/** A ledger of 10 s windows: partition 0 at offsets 5..7, partition 1 at 20. */
function ledger(): OffsetLedger {
  const book = new OffsetLedger({ windowMs: 10_000 });
  const p0 = book.partition(0);
  p0.startAt(5);
  p0.hold(5, book.releaseOf(1_000), book.judgedThrough); // window ending 10 000
  p0.hold(6, book.releaseOf(12_000), book.judgedThrough); // window ending 20 000
  p0.hold(7, book.releaseOf(13_000), book.judgedThrough);
  const p1 = book.partition(1);
  p1.startAt(20);
  return book;
}

describe('GroupCommits', () => {
  it('commits each partition’s judged position with its judged-through metadata', async () => {
    const book = ledger();
    book.markJudgedUpTo(10_000);
    const commits: Commit[] = [];
    const group = new GroupCommits('seats', book, true, () => {});
    await group.now(consumer(commits));
    expect(commits).toEqual([
      [
        { topic: 'seats', partition: 0, offset: '6', metadata: 'shardwise judged-through=10000' },
        { topic: 'seats', partition: 1, offset: '20', metadata: 'shardwise judged-through=10000' },
      ],
    ]);
  });

  it('sends only what differs from the last confirmed commit', async () => {
    const book = ledger();
    book.markJudgedUpTo(10_000);
    const commits: Commit[] = [];
    const group = new GroupCommits('seats', book, true, () => {});
    group.resumed(1, 20, 'shardwise judged-through=10000');
    expect(group.has(1)).toBe(true);
    expect(group.has(0)).toBe(false);
    await group.now(consumer(commits));
    expect(commits.map((c) => c.map((o) => [o.partition, o.offset]))).toEqual([[[0, '6']]]);
    group.confirm({
      topics: [
        {
          topic: 'seats',
          partitions: [{ partition: 0, offset: '6', metadata: 'shardwise judged-through=10000' }],
        },
      ],
    });
    await group.now(consumer(commits));
    expect(commits).toHaveLength(1);
    book.markJudgedUpTo(20_000);
    await group.now(consumer(commits));
    expect(commits[1].map((o) => [o.partition, o.offset, o.metadata])).toEqual([
      [0, '8', 'shardwise judged-through=20000'],
      [1, '20', 'shardwise judged-through=20000'],
    ]);
  });

  it('sends nothing when disabled', async () => {
    const book = ledger();
    book.markJudgedUpTo(20_000);
    const commits: Commit[] = [];
    await new GroupCommits('seats', book, false, () => {}).now(consumer(commits));
    expect(commits).toEqual([]);
  });

  it('reports a failed commit as an event with the innermost cause, without throwing', async () => {
    const events: KafkaSourceEvent[] = [];
    const group = new GroupCommits('seats', ledger(), true, (event) => events.push(event));
    const error = new Error('commit failed', {
      cause: new Error('The coordinator is not aware of this member'),
    });
    await group.now(consumer([], error));
    expect(events).toEqual([
      { type: 'commit-failed', error: 'The coordinator is not aware of this member' },
    ]);
  });

  it('runs one commit at a time: soon() while one is on its way starts none', async () => {
    const book = ledger();
    book.markJudgedUpTo(10_000);
    let calls = 0;
    let release: () => void = () => {};
    const slow = {
      commitOffsets: () => {
        calls++;
        return new Promise<void>((resolve) => (release = resolve));
      },
    } as unknown as Consumer;
    const group = new GroupCommits('seats', book, true, () => {});
    group.soon(slow);
    group.soon(slow);
    expect(calls).toBe(1);
    release();
    await group.settled();
    group.soon(slow);
    expect(calls).toBe(2);
    release();
    await group.settled();
  });

  it('reads confirmations of its topic only, with the newest judged-through', () => {
    const group = new GroupCommits('seats', ledger(), true, () => {});
    expect(
      group.confirm({ topics: [{ topic: 'other', partitions: [{ partition: 0, offset: '1' }] }] }),
    ).toBeNull();
    expect(
      group.confirm({
        topics: [
          {
            topic: 'seats',
            partitions: [
              { partition: 0, offset: '6', metadata: 'shardwise judged-through=10000' },
              { partition: 1, offset: '20', metadata: 'written by another program' },
            ],
          },
        ],
      }),
    ).toEqual({
      offsets: [
        { partition: 0, offset: 6 },
        { partition: 1, offset: 20 },
      ],
      judgedThrough: 10_000,
    });
  });
});
