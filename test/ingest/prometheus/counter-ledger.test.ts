// The increment, reset and ordering rules of the Prometheus source on literal samples.
// Source of truth for the counter semantics: Prometheus documentation, from memory —
// a counter only goes up; any drop in value is a reset, after which the counter counts
// from zero, so the increase across a reset is the new value (as `increase()` and
// `resets()` count it); the first sample of a series carries no increase of its own.
import { describe, expect, it } from 'vitest';
import {
  CounterLedger,
  seriesName,
  type CounterSeries,
} from '../../../src/ingest/prometheus/counter-ledger.js';
import type { SourceItem } from '../../../src/ingest/file-source.js';

function series(
  labels: Record<string, string>,
  samples: readonly (readonly [number, number])[],
): CounterSeries {
  return {
    labels: { __name__: 'requests_total', ...labels },
    timestamps: samples.map(([ts]) => ts),
    values: samples.map(([, value]) => value),
  };
}

const all = Number.POSITIVE_INFINITY;

describe('CounterLedger', () => {
  it('turns consecutive samples into increments stamped at the later sample; the first is a baseline', () => {
    const ledger = new CounterLedger('shard');
    ledger.add([
      series({ shard: 'a' }, [
        [1000, 10],
        [2000, 13],
        [3000, 20],
      ]),
    ]);
    // Hand-computed: 13 - 10 = 3 at 2000, 20 - 13 = 7 at 3000; 10 at 1000 is a baseline.
    expect(ledger.release(all)).toEqual([
      { ts: 2000, shard: 'a', count: 3, partition: 0 },
      { ts: 3000, shard: 'a', count: 7, partition: 0 },
    ]);
  });

  it('counts a drop as a reset: the increment is the new value, never negative', () => {
    const ledger = new CounterLedger('shard');
    ledger.add([
      series({ shard: 'a' }, [
        [1000, 100],
        [2000, 150],
        [3000, 4],
        [4000, 9],
      ]),
    ]);
    // Hand-computed from the reset rule: 50, then 4 (from zero), then 5. Total 59.
    expect(ledger.release(all).map((item) => (item as { count: number }).count)).toEqual([
      50, 4, 5,
    ]);
    expect(ledger.resets).toBe(1);
    expect(ledger.coverageOf(3000, 4000)).toEqual({
      series: 1,
      missing: [],
      complete: true,
      resets: 1,
    });
    expect(ledger.coverageOf(0, 3000)).toBeUndefined();
  });

  it('skips samples already read when reads overlap, so nothing is counted twice', () => {
    const ledger = new CounterLedger('shard');
    ledger.add([
      series({ shard: 'a' }, [
        [1000, 1],
        [2000, 2],
      ]),
    ]);
    ledger.add([
      series({ shard: 'a' }, [
        [1000, 1],
        [2000, 2],
        [3000, 5],
      ]),
    ]);
    expect(ledger.release(all).map((item) => (item as { count: number }).count)).toEqual([1, 3]);
  });

  it('keeps samples before emitFrom as baselines only', () => {
    const ledger = new CounterLedger('shard');
    ledger.add(
      [
        series({ shard: 'a' }, [
          [1000, 5],
          [2000, 8],
          [3000, 12],
        ]),
      ],
      2500,
    );
    expect(ledger.release(all)).toEqual([{ ts: 3000, shard: 'a', count: 4, partition: 0 }]);
  });

  it('releases in time order across series, and only up to the bound', () => {
    const ledger = new CounterLedger('shard');
    ledger.add([
      series({ shard: 'a' }, [
        [1000, 0],
        [3000, 1],
        [5000, 3],
      ]),
      series({ shard: 'b' }, [
        [500, 0],
        [2000, 4],
        [4000, 6],
      ]),
    ]);
    expect(ledger.release(3000).map((item) => (item as { ts: number }).ts)).toEqual([2000, 3000]);
    expect(ledger.release(3000)).toEqual([]);
    expect(ledger.release(all).map((item) => (item as { ts: number }).ts)).toEqual([4000, 5000]);
  });

  it('releases a large read of many series in time order, each series in its own order', () => {
    const ledger = new CounterLedger('shard');
    const read: CounterSeries[] = [];
    for (let index = 0; index < 500; index++) {
      const samples: [number, number][] = [];
      // Scrape phases differ per series and collide across series (index % 7).
      for (let sample = 0; sample < 12; sample++) {
        samples.push([1_764_590_400_000 + sample * 1000 + (index % 7) * 100, sample * (index + 1)]);
      }
      read.push(series({ shard: `s-${index}` }, samples));
    }
    ledger.add(read);
    const released = ledger.release(all) as { ts: number; shard: string; count: number }[];
    // Every rise once (11 per series, the first sample a baseline) ...
    expect(released).toHaveLength(500 * 11);
    for (const item of released) expect(item.count).toBe(Number(item.shard.slice(2)) + 1);
    // ... in time order, and records of one instant in the order the series were read.
    for (let at = 1; at < released.length; at++) {
      const before = released[at - 1];
      const here = released[at];
      expect(here.ts >= before.ts).toBe(true);
      if (here.ts === before.ts) {
        expect(Number(here.shard.slice(2)) > Number(before.shard.slice(2))).toBe(true);
      }
    }
  });

  it('sends a shard with no traffic once (count 0), then leaves out zero increments', () => {
    const ledger = new CounterLedger('shard');
    ledger.add([
      series({ shard: 'idle' }, [
        [1000, 7],
        [2000, 7],
        [3000, 7],
      ]),
    ]);
    expect(ledger.release(all)).toEqual([{ ts: 2000, shard: 'idle', count: 0, partition: 0 }]);
  });

  it('rejects series without the shard label and increments that are not whole numbers', () => {
    const ledger = new CounterLedger('shard');
    ledger.add([
      series({ instance: 'x' }, [
        [1000, 1],
        [2000, 2],
      ]),
      series({ shard: 'a' }, [
        [1000, 1],
        [2000, 2.5],
      ]),
    ]);
    expect(ledger.release(all)).toEqual<SourceItem[]>([
      { reason: 'missing shard' },
      { reason: 'non-integer count' },
    ]);
  });

  it('holds the release at the oldest live series, and lets go of a stopped one', () => {
    const ledger = new CounterLedger('shard');
    const live = (from: number, to: number): [number, number][] => {
      const samples: [number, number][] = [];
      for (let ts = from; ts <= to; ts += 1000) samples.push([ts, ts / 1000]);
      return samples;
    };
    ledger.add([
      series({ shard: 'a' }, live(1000, 5000)),
      series({ shard: 'b' }, live(1000, 4000)),
    ]);
    expect(ledger.scrapedThrough()).toBe(4000);
    // b falls 3 of its 1 s intervals behind at 7000 (4000 + 3000 is not yet more), stopped past it.
    ledger.add([series({ shard: 'a' }, live(1000, 7000))]);
    expect(ledger.scrapedThrough()).toBe(4000);
    ledger.add([series({ shard: 'a' }, live(1000, 8000))]);
    expect(ledger.scrapedThrough()).toBe(8000);
    const coverage = ledger.coverageOf(4000, 6000);
    expect(coverage).toEqual({
      series: 2,
      missing: ['requests_total{shard="b"}'],
      complete: false,
      resets: 0,
    });
    // Before b's last sample the window is whole.
    expect(ledger.coverageOf(2000, 4000)).toBeUndefined();
    // b comes back: the gap stays on record for the windows it spanned; b is live again.
    ledger.add([series({ shard: 'b' }, live(10_000, 11_000))]);
    expect(ledger.gaps).toEqual([{ series: 'requests_total{shard="b"}', from: 4000, to: 10_000 }]);
    expect(ledger.coverageOf(4000, 6000)?.missing).toEqual(['requests_total{shard="b"}']);
    expect(ledger.coverageOf(10_000, 12_000)).toBeUndefined();
  });

  it('forgets a series stopped long ago; back again, its first sample is a new baseline', () => {
    const ledger = new CounterLedger('shard');
    const ticks = (from: number, to: number, value: (ts: number) => number) => {
      const samples: [number, number][] = [];
      for (let ts = from; ts <= to; ts += 1000) samples.push([ts, value(ts)]);
      return samples;
    };
    ledger.add([
      series(
        { shard: 'a' },
        ticks(1000, 10_000, (ts) => ts / 1000),
      ),
      series(
        { shard: 'b' },
        ticks(1000, 3000, (ts) => ts / 1000),
      ),
    ]);
    ledger.release(all);
    expect(ledger.seriesCount).toBe(2);
    ledger.forgetBefore(5000);
    expect(ledger.seriesCount).toBe(1);
    ledger.add([
      series(
        { shard: 'b' },
        ticks(11_000, 12_000, (ts) => ts / 1000),
      ),
    ]);
    // 11 at 11000 is a baseline again; only the rise to 12 at 12000 counts.
    expect(ledger.release(all)).toEqual([{ ts: 12_000, shard: 'b', count: 1, partition: 0 }]);
  });

  it('writes label sets as PromQL writes a selector, values escaped', () => {
    expect(seriesName({ __name__: 'x', z: 'a"b\\c\nd', a: '1' })).toBe(
      'x{a="1",z="a\\"b\\\\c\\nd"}',
    );
  });
});
