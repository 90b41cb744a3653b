import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings, type JudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import {
  compareIds,
  shardCandidates,
  sharesMatchVerdict,
  sharesOfNull,
  unflaggedP,
} from '../../src/judge/shard-candidates.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

// 2025-12-01T00:00:00Z; one window of 10 s.
const base = Date.UTC(2025, 11, 1);
const windowMs = 10_000;

function closed(counts: readonly number[]): ClosedWindow {
  const vector = Float64Array.from(counts);
  return {
    start: base,
    end: base + windowMs,
    counts: vector,
    total: vector.reduce((sum, count) => sum + count, 0),
    late: 0,
    rejected: {},
  };
}

function judged(
  universe: ShardUniverse,
  counts: readonly number[],
  overrides: Partial<JudgeSettings> = {},
): { window: ClosedWindow; judgement: Judgement } {
  const settings = { ...defaultJudgeSettings, hopMs: windowMs, ...overrides };
  const window = closed(counts);
  return { window, judgement: new Judge(universe, settings).judge(window) };
}

/** Counts 100 + 3 i, shuffled by a fixed stride so neighbours differ (an invented cluster). */
function rampCounts(m: number): number[] {
  const counts = new Array<number>(m);
  for (let i = 0; i < m; i++) counts[(i * 37) % m] = 100 + 3 * i;
  return counts;
}

describe('shardCandidates', () => {
  it('keeps the highest and lowest relative loads and the first ids of all shards', () => {
    const m = 200;
    const universe = ShardUniverse.fromIds(Array.from({ length: m }, (_, i) => `seat-${i}`));
    const counts = rampCounts(m);
    const { window, judgement } = judged(universe, counts);
    const rows = 5;
    const candidates = shardCandidates(window, judgement, null, (i) => universe.idAt(i), rows);
    const ids = new Set(candidates.map((candidate) => candidate.shard));
    // Reference: a full sort of every shard (common practice), against the one-pass selection.
    const byLoad = counts
      .map((count, index) => ({ id: universe.idAt(index), count }))
      .sort((a, b) => b.count - a.count);
    for (const { id } of [...byLoad.slice(0, rows), ...byLoad.slice(-rows)]) {
      expect(ids.has(id)).toBe(true);
    }
    // Reading order, worked by hand: seat-0..seat-4 come before seat-10 and seat-100.
    for (const id of ['seat-0', 'seat-1', 'seat-2', 'seat-3', 'seat-4']) {
      expect(ids.has(id)).toBe(true);
    }
    expect(ids.has('seat-10')).toBe(false);
    // No more than the three lists of `rows` (flagged shards and extremes are among them here).
    expect(candidates.length).toBeLessThanOrEqual(3 * rows + judgement.flagged.length);
    // Equal shares: every fair share is N / m (worked by hand: N = 200 * 100 + 3 * 19900).
    const n = 200 * 100 + 3 * ((199 * 200) / 2);
    expect(window.total).toBe(n);
    for (const candidate of candidates) {
      expect(candidate.fairShare).toBeCloseTo(n / m, 9);
      expect(candidate.relative).toBeCloseTo(candidate.count / (n / m), 12);
    }
  });

  it('gives declared shares their own fair share (worked by hand)', () => {
    // Shares 1 : 1 : 2 of N = 1000: fair shares 250, 250 and 500.
    const universe = ShardUniverse.fromWeights(['a', 'b', 'c'], [1, 1, 2]);
    const { window, judgement } = judged(universe, [240, 260, 500], { null: 'map' });
    const candidates = shardCandidates(
      window,
      judgement,
      universe.shares,
      (i) => universe.idAt(i),
      40,
    );
    const fair = Object.fromEntries(candidates.map((c) => [c.shard, c.fairShare]));
    expect(fair).toEqual({ a: 250, b: 250, c: 500 });
    const relative = Object.fromEntries(candidates.map((c) => [c.shard, c.relative]));
    expect(relative.a).toBeCloseTo(240 / 250, 12);
    expect(relative.c).toBeCloseTo(1, 12);
    // The uniform null ignores the declared shares: N / m each.
    const uniform = judged(universe, [240, 260, 500], { null: 'uniform' });
    const equal = shardCandidates(
      uniform.window,
      uniform.judgement,
      universe.shares,
      (i) => universe.idAt(i),
      40,
    );
    for (const candidate of equal) expect(candidate.fairShare).toBeCloseTo(1000 / 3, 9);
  });

  it('marks flagged shards with their exact p, finding and streak', () => {
    const universe = ShardUniverse.ofCount(64);
    const counts = new Array<number>(64).fill(100);
    counts[7] = 400; // four times the fair share of 100: far beyond chance at m = 64
    const { window, judgement } = judged(universe, counts);
    expect(judgement.flagged.map((flagged) => flagged.shard)).toEqual(['7']);
    const candidates = shardCandidates(window, judgement, null, (i) => universe.idAt(i), 40);
    const hot = candidates.find((candidate) => candidate.shard === '7');
    expect(hot).toMatchObject({
      count: 400,
      finding: 'hotspot',
      p: judgement.flagged[0].p,
      pBound: '',
      streak: judgement.flagged[0].streak,
      incident: false,
    });
    expect(hot?.fairShare).toBeCloseTo(judgement.requests / 64, 9);
  });

  it('has no candidates for a window without requests', () => {
    const universe = ShardUniverse.ofCount(8);
    const { window, judgement } = judged(universe, new Array<number>(8).fill(0));
    expect(shardCandidates(window, judgement, null, (i) => universe.idAt(i), 40)).toEqual([]);
  });

  it('lists only flagged shards and extremes under a ready learned baseline', () => {
    const m = 100;
    const universe = ShardUniverse.ofCount(m);
    const { window, judgement } = judged(universe, rampCounts(m));
    const learned: Judgement = {
      ...judgement,
      null: 'baseline',
      baseline: { ready: true, learnedWindows: 30, neededWindows: 30 },
    };
    expect(sharesMatchVerdict(learned)).toBe(false);
    expect(sharesMatchVerdict(judgement)).toBe(true);
    const candidates = shardCandidates(window, learned, null, (i) => universe.idAt(i), 40);
    const expected = new Set([
      ...learned.flagged.map((flagged) => flagged.shard),
      learned.fullest?.shard,
      learned.emptiest?.shard,
    ]);
    expect(new Set(candidates.map((candidate) => candidate.shard))).toEqual(expected);
    // The fair share is read back from the verdict's own count and relative load.
    for (const candidate of candidates) {
      expect(candidate.fairShare).toBeCloseTo(candidate.count / candidate.relative, 9);
    }
  });
});

describe('unflaggedP', () => {
  // The bounds follow from the order of the tests (worked by hand): P(max r >= r_i) is at
  // least the fullest's p for a lower load, and above alpha for a load under the ceiling.
  const universe = ShardUniverse.ofCount(16);
  const { judgement } = judged(universe, new Array<number>(16).fill(100));
  const ceiling = { relative: 1.5, requests: 150 };
  const floor = { relative: 0.5, requests: 50 };
  const at = (fullestP: number, emptiestP: number): Judgement => ({
    ...judgement,
    alpha: 0.001,
    ceiling,
    floor,
    coldTests: true,
    fullest: judgement.fullest === null ? null : { ...judgement.fullest, p: fullestP },
    emptiest: judgement.emptiest === null ? null : { ...judgement.emptiest, p: emptiestP },
  });

  it('borrows the extreme p when it is above alpha', () => {
    expect(unflaggedP(1.2, at(0.207, 0.3))).toEqual({ p: 0.207, pBound: '≥' });
    expect(unflaggedP(0.8, at(0.207, 0.3))).toEqual({ p: 0.3, pBound: '≥' });
  });

  it('says above alpha for a shard within chance when the extreme is beyond it', () => {
    expect(unflaggedP(1.2, at(1e-9, 0.3))).toEqual({ p: 0.001, pBound: '>' });
    expect(unflaggedP(0.8, at(0.3, 1e-9))).toEqual({ p: 0.001, pBound: '>' });
  });

  it('borrows the extreme p for a shard beyond chance, unless it is at the reporting floor', () => {
    expect(unflaggedP(1.7, at(1e-9, 0.3))).toEqual({ p: 1e-9, pBound: '≥' });
    expect(unflaggedP(1.7, at(1e-301, 0.3))).toEqual({ p: null, pBound: '' });
  });

  it('knows nothing of the cold side with the cold tests off', () => {
    const off: Judgement = { ...at(0.3, 0.3), coldTests: false, floor: null };
    expect(unflaggedP(0.8, off)).toEqual({ p: null, pBound: '' });
  });
});

describe('sharesOfNull and compareIds', () => {
  it('drops the declared shares under the uniform null only', () => {
    const universe = ShardUniverse.ofCount(4);
    const { judgement } = judged(universe, [10, 10, 10, 10]);
    const shares = [0.1, 0.2, 0.3, 0.4];
    expect(sharesOfNull({ ...judgement, null: 'uniform' }, shares)).toBeNull();
    expect(sharesOfNull({ ...judgement, null: 'map' }, shares)).toBe(shares);
  });

  it('orders ids as they read: seat-2 before seat-10 (worked by hand)', () => {
    expect(['seat-10', 'seat-2', 'seat-1'].sort(compareIds)).toEqual([
      'seat-1',
      'seat-2',
      'seat-10',
    ]);
  });
});
describe('compareIds', () => {
  it('reading order: seat-2 before seat-10 (the doc comment’s example)', () => {
    expect(compareIds('seat-2', 'seat-10')).toBeLessThan(0);
    expect(['seat-10', 'seat-2', 'seat-1', 'b', 'a'].sort(compareIds)).toEqual([
      'a',
      'b',
      'seat-1',
      'seat-2',
      'seat-10',
    ]);
    expect(compareIds('node-007', 'node-007')).toBe(0);
  });
});
