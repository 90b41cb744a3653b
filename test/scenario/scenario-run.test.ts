import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { encodeJsonLine } from '../../src/ingest/encode.js';
import { builtInScenarios } from '../../src/scenario/built-in-scenarios.js';
import { shardOfKey } from '../../src/scenario/key-popularity.js';
import { runScenario, type ScenarioRun } from '../../src/scenario/scenario-run.js';
import { UsageError } from '../../src/errors/usage-error.js';
import { EventTimeWindows, type ClosedWindow } from '../../src/window/event-time-window.js';

const start = Date.UTC(2025, 11, 1, 10);
const second = 1000;

function digest(run: ScenarioRun): string {
  const hash = createHash('sha256');
  for (const record of run.records()) hash.update(`${encodeJsonLine(record)}\n`);
  return hash.digest('hex');
}

/** Per-shard totals of the records with from <= ts < until. */
function countsBetween(run: ScenarioRun, from: number, until: number): Float64Array {
  const counts = new Float64Array(run.universe.size);
  for (const record of run.records()) {
    if (record.ts >= from && record.ts < until)
      counts[run.universe.indexOf(record.shard)] += record.count;
  }
  return counts;
}

function sum(values: Float64Array): number {
  return values.reduce((total, value) => total + value, 0);
}

function relativeLoad(counts: Float64Array, index: number, share: number): number {
  return counts[index] / (sum(counts) * share);
}

describe('runScenario determinism', () => {
  it('gives byte-identical output for the same seed, for every built-in scenario', () => {
    for (const name of builtInScenarios.keys()) {
      const options = {
        seed: 12345,
        startMs: start,
        durationMs: name === 'zipf-keys' ? 20 * second : 90 * second,
      };
      const first = runScenario(name, options);
      const again = runScenario(name, options);
      expect(digest(again), name).toBe(digest(first));
      // Replaying one run twice gives the same bytes too (records() starts the stream over).
      expect(digest(first), name).toBe(digest(first));
      expect(digest(runScenario(name, { ...options, seed: 12346 })), name).not.toBe(digest(first));
    }
  });

  it('stamps records with the tick start, in time order, inside the run', () => {
    const run = runScenario('chance', { seed: 1, startMs: start + 250, durationMs: 10 * second });
    let previous = Number.NEGATIVE_INFINITY;
    let records = 0;
    for (const record of run.records()) {
      expect(record.ts).toBeGreaterThanOrEqual(previous);
      expect((record.ts - run.startMs) % 1000).toBe(0);
      expect(record.ts).toBeLessThan(run.endMs);
      previous = record.ts;
      records++;
    }
    // One report per shard per 1 s tick: 64 x 10.
    expect(records).toBe(640);
  });

  it('validates its options, naming each one', () => {
    expect(() => runScenario('nonsense', { seed: 1, startMs: start, durationMs: 1000 })).toThrow(
      UsageError,
    );
    expect(() => runScenario('nonsense', { seed: 1, startMs: start, durationMs: 1000 })).toThrow(
      /--scenario: "nonsense" is not a built-in scenario \(demo, chance, hotspot, dead-shard, failover, zipf-keys, weighted, diurnal, hot-key, biased-partitioner, keyed-failover\)/,
    );
    expect(() => runScenario('chance', { seed: -1, startMs: start, durationMs: 1000 })).toThrow(
      '--seed',
    );
    expect(() => runScenario('chance', { seed: 1, startMs: -5, durationMs: 1000 })).toThrow(
      '--start',
    );
    expect(() => runScenario('chance', { seed: 1, startMs: start, durationMs: 0 })).toThrow(
      '--duration',
    );
  });

  it('can run without end and stop wherever the reader stops', () => {
    const run = runScenario('demo', {
      seed: 1,
      startMs: start,
      durationMs: Number.POSITIVE_INFINITY,
    });
    let taken = 0;
    for (const record of run.records()) {
      if (record.ts >= start + 60 * 60 * second || ++taken === 64 * 30) break;
    }
    expect(taken).toBe(64 * 30);
    expect(run.truth.endMs).toBe(Number.POSITIVE_INFINITY);
  });
});

// Tolerances below are stated in standard errors of Poisson counts: a shard expecting E requests
// has a count with standard deviation sqrt(E), so its relative load has about 1/sqrt(E).
describe('planted ground truth shows in the counts', () => {
  it('hotspot: seat-17 carries 1.5x its fair share while planted, 1x otherwise', () => {
    const run = runScenario('hotspot', { seed: 3, startMs: start, durationMs: 240 * second });
    const [plant] = run.truth.events;
    expect(plant).toMatchObject({
      kind: 'hotspot',
      shard: 'seat-17',
      factor: 1.5,
      fullFrom: start + 60 * second,
      fullUntil: start + 180 * second,
    });
    const hot = run.universe.indexOf('seat-17');
    const during = countsBetween(run, plant.fullFrom, plant.fullUntil);
    // 120 s x 6400/s x 1.5/64 = 18000 expected: relative sd 0.0075, tolerance 0.04 is over 5 sd.
    expect(Math.abs(relativeLoad(during, hot, 1 / 64) - 1.5)).toBeLessThan(0.04);
    const before = countsBetween(run, start, plant.beginsAt);
    // 60 s x 100/s = 6000 expected: relative sd 0.013, tolerance 0.07.
    expect(Math.abs(relativeLoad(before, hot, 1 / 64) - 1)).toBeLessThan(0.07);
    // The total rate is unchanged by a hotspot: 6400/s, relative sd 0.0005; tolerance 0.005.
    expect(Math.abs(sum(during) / (120 * 6400) - 1)).toBeLessThan(0.005);
  });

  it('dead-shard: seat-42 is silent and the others share its load', () => {
    const run = runScenario('dead-shard', { seed: 4, startMs: start, durationMs: 240 * second });
    const [plant] = run.truth.events;
    expect(plant).toMatchObject({ kind: 'dead', shard: 'seat-42' });
    let reportsFromDead = 0;
    for (const record of run.records()) {
      if (record.shard === 'seat-42' && record.ts >= plant.fullFrom && record.ts < plant.fullUntil)
        reportsFromDead++;
    }
    expect(reportsFromDead).toBe(0);
    const during = countsBetween(run, plant.fullFrom, plant.fullUntil);
    // Each of the 63 others expects 1/63 of the load: 120 s x 6400/63 = 12190, relative sd 0.009;
    // bounds at +-5% are over 5 sd. No shard takes the dead one's load alone.
    const others = [...during].filter((_, index) => index !== run.universe.indexOf('seat-42'));
    const relativeToOneIn63 = others.map((count) => count / (sum(during) / 63));
    expect(Math.max(...relativeToOneIn63)).toBeLessThan(1.05);
    expect(Math.min(...relativeToOneIn63)).toBeGreaterThan(0.95);
    // The total rate is unchanged by a dead shard.
    expect(Math.abs(sum(during) / (120 * 6400) - 1)).toBeLessThan(0.005);
  });

  it('failover: seat-42 is silent and seat-43 carries twice its fair share', () => {
    const run = runScenario('failover', { seed: 5, startMs: start, durationMs: 240 * second });
    const [plant] = run.truth.events;
    expect(plant).toMatchObject({ kind: 'failover', shard: 'seat-42', to: 'seat-43' });
    const during = countsBetween(run, plant.fullFrom, plant.fullUntil);
    expect(during[run.universe.indexOf('seat-42')]).toBe(0);
    // 24000 expected: relative sd 0.0065; tolerance 0.04.
    expect(
      Math.abs(relativeLoad(during, run.universe.indexOf('seat-43'), 1 / 64) - 2),
    ).toBeLessThan(0.04);
  });

  it('demo: every plant comes and goes within the first six minutes and shows in 10 s windows', () => {
    const run = runScenario('demo', { seed: 2025, startMs: start, durationMs: 360 * second });
    const kinds = run.truth.events.map((event) => event.kind);
    expect(kinds).toEqual(['hotspot', 'failover', 'lull', 'uneven']);
    expect(run.truth.events[0].beginsAt - start).toBeLessThan(60 * second);
    expect(Math.max(...run.truth.events.map((event) => event.endsAt))).toBeLessThanOrEqual(
      start + 360 * second,
    );

    const windows: ClosedWindow[] = [];
    const counter = new EventTimeWindows(
      run.universe,
      { windowMs: 10 * second, latenessMs: 2 * second },
      (window) => windows.push(window),
    );
    for (const record of run.records()) counter.addRecord(record);
    counter.closeAll();
    expect(windows).toHaveLength(36);
    const windowAt = (offsetSeconds: number) => windows[offsetSeconds / 10];
    const relative = (window: ClosedWindow, id: string) =>
      window.counts[run.universe.indexOf(id)] / (window.total / 64);
    // Hotspot at full strength 30-80 s: seat-17 near 1.8x (1000 per shard per window: relative sd 0.024, tolerance 0.15).
    for (const offset of [30, 40, 50, 60, 70])
      expect(Math.abs(relative(windowAt(offset), 'seat-17') - 1.8)).toBeLessThan(0.15);
    expect(relative(windowAt(120), 'seat-17')).toBeLessThan(1.15);
    // Failover 150-230 s: seat-42 empty, seat-43 near 2x.
    for (const offset of [150, 180, 220]) {
      expect(relative(windowAt(offset), 'seat-42')).toBe(0);
      expect(Math.abs(relative(windowAt(offset), 'seat-43') - 2)).toBeLessThan(0.15);
    }
    // Lull 260-300 s: 0.4% of the traffic, under 600 requests a window (expected about 200).
    for (const offset of [260, 270, 280, 290]) expect(windowAt(offset).total).toBeLessThan(600);
    expect(windowAt(250).total).toBeGreaterThan(40_000);
    // Uneven 300-330 s: dispersion phi = X^2/(m-1) well above 1, no shard at +20%.
    const phi = (window: ClosedWindow) => {
      const fair = window.total / 64;
      return window.counts.reduce((total, count) => total + (count - fair) ** 2 / fair, 0) / 63;
    };
    for (const offset of [300, 310, 320]) {
      // docs/model.md: phi about 1 + (N/m) CV^2; CV = 0.07/sqrt(2) and N/m near 850 here: about 3.
      expect(phi(windowAt(offset))).toBeGreaterThan(2);
      expect(
        Math.max(
          ...[...windowAt(offset).counts].map((count) => count / (windowAt(offset).total / 64)),
        ),
      ).toBeLessThan(1.2);
    }
    // Quiet stretches judged by chance: phi near 1 (sd sqrt(2/63) = 0.18; bound 1.9 is 5 sd).
    for (const offset of [0, 110, 240, 340]) expect(phi(windowAt(offset))).toBeLessThan(1.9);
  });

  it('demo: repeats every six minutes, and its ground truth lists each occurrence', () => {
    const run = runScenario('demo', { seed: 1, startMs: start, durationMs: 720 * second });
    expect(run.truth.events).toHaveLength(8);
    expect(run.truth.events[4].beginsAt - run.truth.events[0].beginsAt).toBe(360 * second);
    expect(
      run.eventsBetween(start + 400 * second, start + 500 * second).map((event) => event.kind),
    ).toEqual(['hotspot']);
  });

  it('zipf-keys: request events with keys hashed to shards; shard loads follow the key popularity', () => {
    const run = runScenario('zipf-keys', { seed: 6, startMs: start, durationMs: 60 * second });
    const counts = new Float64Array(64);
    let events = 0;
    let malformed = 0;
    for (const record of run.records()) {
      const index = run.universe.indexOf(record.shard);
      const wellFormed =
        record.count === 1 &&
        /^perf-\d+$/.test(record.key ?? '') &&
        shardOfKey(record.key as string, 64) === index;
      if (!wellFormed) malformed++;
      counts[index]++;
      events++;
    }
    expect(malformed).toBe(0);
    // 1000 events/s for 60 s: 60000, sd 245; tolerance 1500 (6 sd).
    expect(Math.abs(events - 60_000)).toBeLessThan(1500);
    // Each shard's count is Poisson with mean 60000 x its key-implied share; tolerance 5 sd + 1.
    run.truth.trafficShares.forEach((share, index) => {
      const expected = events * share;
      expect(Math.abs(counts[index] - expected), run.universe.idAt(index)).toBeLessThan(
        5 * Math.sqrt(expected) + 1,
      );
    });
    // Hot keys make a hot shard with perfect hashing: the top shard is far above the fair 1/64.
    expect(Math.max(...run.truth.trafficShares) * 64).toBeGreaterThan(3);
    expect([...run.truth.declaredShares]).toEqual(new Array(64).fill(1 / 64));
  });

  it('weighted: traffic follows the ring shares the universe declares', () => {
    const run = runScenario('weighted', { seed: 8, startMs: start, durationMs: 300 * second });
    expect([...run.universe.shares]).toEqual([...run.truth.declaredShares]);
    const counts = countsBetween(run, start, run.endMs);
    const total = sum(counts);
    counts.forEach((count, index) => {
      const expected = total * run.truth.declaredShares[index];
      expect(Math.abs(count - expected)).toBeLessThan(5 * Math.sqrt(expected));
    });
    // The ring's shares are uneven (CV near 1/sqrt(16)): judged against equal shares the cluster looks skewed.
    const shares = [...run.truth.declaredShares];
    expect(Math.max(...shares) * 64).toBeGreaterThan(1.2);
  });

  it('diurnal: the rate peaks a quarter period in at 1.6x and dips at three quarters to 0.4x', () => {
    const run = runScenario('diurnal', { seed: 1, startMs: start, durationMs: 24 * 3600 * second });
    expect(run.expectedRate(start + 6 * 3600 * second)).toBeCloseTo(6400 * 1.6, 6);
    expect(run.expectedRate(start + 18 * 3600 * second)).toBeCloseTo(6400 * 0.4, 6);
  });
});
