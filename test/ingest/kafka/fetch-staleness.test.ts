// When a partition that said it had more stops holding the others back. Times are worked by
// hand on made-up fetch sequences (ms): the stale time is 5000 ms and a gap between batches
// counts for at most 1000 ms, as the Kafka source sets them.
import { describe, expect, it } from 'vitest';
import { FetchStaleness } from '../../../src/ingest/kafka/fetch-staleness.js';

const none = () => false;

describe('FetchStaleness', () => {
  it('releases a partition once the others have delivered for the stale time without it', () => {
    const staleness = new FetchStaleness(1000);
    staleness.reset([0, 1], 0);
    // Partition 1 delivers every 500 ms; partition 0 stays quiet from 0.
    for (let t = 500; t <= 5000; t += 500) staleness.fetched(1, t);
    expect(staleness.stale(5000, none)).toEqual([]); // 5000 ms of reading, not more
    staleness.fetched(1, 5500);
    expect(staleness.stale(5000, none)).toEqual([0]);
    // Reported once, until its next batch.
    staleness.fetched(1, 9000);
    expect(staleness.stale(5000, none)).toEqual([]);
  });

  it('does not count time in which no batch came from anyone (a broker outage)', () => {
    // Before, the source released every partition 5 s into an outage by the wall clock:
    // measured in the suite as 125 records too late after a broker restart.
    const staleness = new FetchStaleness(1000);
    staleness.reset([0, 1, 2], 0);
    staleness.fetched(0, 1000);
    staleness.fetched(1, 1000);
    staleness.fetched(2, 1000);
    // The broker is down from 1000 to 20 000 ms: nothing comes; then partition 0 first.
    staleness.fetched(0, 20_000);
    expect(staleness.stale(5000, none)).toEqual([]);
    staleness.fetched(1, 20_500);
    staleness.fetched(2, 21_000);
    for (let t = 21_500; t <= 25_000; t += 500) staleness.fetched(0, t);
    expect(staleness.stale(5000, none)).toEqual([]);
  });

  it('does not release a partition held off by a stalled process, nor one with messages buffered', () => {
    const staleness = new FetchStaleness(1000);
    staleness.reset([0, 1], 0);
    staleness.fetched(0, 100);
    staleness.fetched(1, 200);
    // The process gets no CPU for 8 s; then partition 0's batch is the first thing to run.
    staleness.fetched(0, 8200);
    expect(staleness.stale(5000, none)).toEqual([]);
    // Partition 0 delivers for 5 s more without partition 1, which still has messages buffered.
    for (let t = 8700; t <= 13_200; t += 500) staleness.fetched(0, t);
    expect(staleness.stale(5000, (partition) => partition === 1)).toEqual([]);
    expect(staleness.stale(5000, none)).toEqual([1]);
  });

  it('starts afresh on a rejoin with the partitions now held, and refuses a gap of 0', () => {
    const staleness = new FetchStaleness(1000);
    staleness.reset([0, 1], 0);
    staleness.fetched(1, 100);
    staleness.reset([0, 2], 200);
    for (let t = 300; t <= 5300; t += 500) staleness.fetched(2, t);
    expect(staleness.stale(5000, none)).toEqual([0]);
    expect(() => new FetchStaleness(0)).toThrow('maxGapMs 0 is not above 0');
  });
});
