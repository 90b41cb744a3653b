import { describe, expect, it } from 'vitest';
import { screenLayout } from '../../src/ui/screen-layout.js';
import { shardTableView } from '../../src/ui/shard-rows-view.js';
import type { ShardCandidate } from '../../src/judge/shard-candidates.js';
import type { ScreenContext, WindowView } from '../../src/ui/view-common.js';

const context: ScreenContext = {
  sourceLabel: 'file counts.jsonl',
  windowMs: 10_000,
  latenessMs: 2_000,
  confirm: 3,
  clear: 5,
  maxDetectable: 3,
};

const candidate = (
  shard: string,
  count: number,
  over: Partial<ShardCandidate>,
): ShardCandidate => ({
  shard,
  count,
  fairShare: 100,
  relative: count / 100,
  p: 0.001,
  pBound: '>',
  finding: null,
  streak: 0,
  incident: false,
  ...over,
});

// N = 800 on 8 shards (fair share 100); ceiling 1.2x, floor 0.8x.
const candidates = [
  candidate('3', 80, { p: 0.3, pBound: '≥' }),
  candidate('10', 90, {}),
  candidate('2', 105, {}),
  candidate('7', 240, { p: 1e-9, pBound: '', finding: 'hotspot', streak: 2, incident: true }),
];
const view = {
  judgement: { ceiling: { relative: 1.2 }, floor: { relative: 0.8 } },
  candidates,
  sharesMatchVerdict: true,
} as unknown as WindowView;
const layout = screenLayout({ columns: 80, rows: 24 });

describe('shardTableView', () => {
  it('by evidence: flagged first, then by the p column, ties toward the chance limit', () => {
    // '10' (0.9x) and '2' (1.05x) both read >0.001; 0.9x is half way to the floor, 1.05x a
    // quarter of the way to the ceiling, so '10' comes first.
    const table = shardTableView(view, 'evidence', layout, context);
    expect(table.title).toBe('Shards · sorted by evidence (s) · streak 3 opens an incident (!)');
    expect(table.empty).toBeNull();
    expect(
      table.rows.map(({ mark, tone, shard, load, fair, relative, p, streak }) => [
        mark,
        tone,
        shard,
        load,
        fair,
        relative,
        p,
        streak,
      ]),
    ).toEqual([
      ['▲', 'hotspot', '7', '240', '100', '2.40x', '1e-9', '2 !'],
      [' ', 'plain', '10', '90', '100', '0.90x', '>0.001', '-'],
      [' ', 'plain', '2', '105', '100', '1.05x', '>0.001', '-'],
      [' ', 'plain', '3', '80', '100', '0.80x', '≥0.3', '-'],
    ]);
  });

  it('the bars’ scale: from a little below the floor, the band to the ceiling at least half', () => {
    // low = 0.8 - 0.1 (1.2 - 0.8) = 0.76; high = 2.4 + 0.05 (2.4 - 0.76) = 2.482; the band
    // to the ceiling would be 0.44 / 1.722 of the bar, so it keeps half: 1.2x at 0.5, 2.4x
    // at 0.5 + 0.5 (1.2 / 1.282), 0.9x at 0.5 (0.14 / 0.44), the floor at 0.5 (0.04 / 0.44).
    const [hot, ninety, , eighty] = shardTableView(view, 'evidence', layout, context).rows;
    expect(hot.bar.ceiling).toBeCloseTo(0.5, 12);
    expect(hot.bar.load).toBeCloseTo(0.5 + 0.5 * (1.2 / 1.282), 12);
    expect(ninety.bar.load).toBeCloseTo(0.5 * (0.14 / 0.44), 12);
    expect(eighty.bar.load).toBeCloseTo(0.5 * (0.04 / 0.44), 12);
    expect(eighty.bar.floor).toBeCloseTo(0.5 * (0.04 / 0.44), 12);
  });

  it('the heading labels the bars: the scale’s left end, 1x and the ceiling; the floor left out where it would touch', () => {
    // 25 cells of bar: 0.76x at 0, 1x at round(24 x 0.2727) = 7, ceiling at 12; the floor
    // at 1 collides with 0.76x either way round.
    expect(shardTableView(view, 'evidence', layout, context).heading).toBe(
      ' shard           load    fair    rel     adj p streak 0.76x  1x   ┃1.20x',
    );
  });

  it('by load and by shard id, choosing from all candidates', () => {
    expect(shardTableView(view, 'load', layout, context).rows.map((row) => row.shard)).toEqual([
      '7',
      '2',
      '10',
      '3',
    ]);
    expect(shardTableView(view, 'shard', layout, context).rows.map((row) => row.shard)).toEqual([
      '2',
      '3',
      '7',
      '10',
    ]);
  });

  it('before the first window and without requests', () => {
    const waiting = shardTableView(null, 'evidence', layout, context);
    expect(waiting.empty).toBe('No window judged yet.');
    expect(waiting.heading).toBe(
      ' shard           load    fair    rel     adj p streak load vs chance ┃ceiling',
    );
    expect(
      shardTableView({ ...view, candidates: [] } as WindowView, 'load', layout, context).empty,
    ).toBe('No requests in this window.');
  });
});
