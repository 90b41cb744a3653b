import { describe, expect, it } from 'vitest';
import { formatP } from '../../src/ui/display-numbers.js';
import { screenLayout } from '../../src/ui/view-model.js';
import { judgeScenario, modelOf, scenarioViews } from './judged-windows.js';

const demo = scenarioViews('demo', 24);

describe('screenLayout', () => {
  it('at 80x24 stacks the panels in 23 lines: 4 shard rows, a 3-row chart', () => {
    const layout = screenLayout({ columns: 80, rows: 24 });
    // One line and one column are kept free (the frame never scrolls, no line meets the edge).
    expect(layout).toMatchObject({
      columns: 79,
      lines: 23,
      sideBySide: false,
      shardRows: 4,
      chartHeight: 3,
    });
    // header 1, verdict 4, shards 2 + 4, spread 2 + 3, history 4, incidents, source, keys
    expect(1 + 4 + (2 + layout.shardRows) + (2 + layout.chartHeight) + 4 + 3).toBe(23);
    expect(layout.historySlots).toBe(79 - layout.historyLabelWidth);
  });

  it('gives more room to rows, chart and history when the terminal has it', () => {
    const tall = screenLayout({ columns: 80, rows: 50 });
    expect(tall.shardRows).toBeGreaterThan(4);
    expect(tall.chartHeight).toBeGreaterThan(3);
    const wide = screenLayout({ columns: 200, rows: 50 });
    expect(wide.sideBySide).toBe(true);
    expect(wide.shardPanelWidth + 1 + wide.spreadPanelWidth).toBe(199);
    expect(wide.barWidth).toBeGreaterThan(screenLayout({ columns: 80, rows: 24 }).barWidth);
    expect(wide.historySlots).toBeGreaterThan(tall.historySlots);
  });
});

describe('buildScreenModel', () => {
  it('marks adjusted p-values of unflagged shards as bounds, and none at the engine floor', () => {
    // Window 3 (00:00:30): seat-17 flagged with its exact p; any other shard's adjusted p
    // is at least the fullest's (hot side) or the emptiest's (cold side).
    const view = demo[3];
    const rows = modelOf(demo.slice(0, 4)).shards.rows;
    expect(rows[0]).toMatchObject({ shard: 'seat-17', mark: '▲', streak: '2' });
    expect(rows[0].p).toBe(formatP(view.judgement.fullest?.p as number));
    // The fullest's p is below alpha, so hot-side shards within chance say `>alpha`.
    const bounds = new Set([
      `>${formatP(view.judgement.alpha)}`,
      `≥${formatP(view.judgement.emptiest?.p as number)}`,
    ]);
    const exact = new Set([view.judgement.fullest?.shard, view.judgement.emptiest?.shard]);
    for (const row of rows.slice(1)) {
      if (exact.has(row.shard)) expect(row.p).not.toContain('≥');
      else expect(bounds).toContain(row.p);
    }
    // Window 16: the emptiest (dead) shard's p is at the 1e-300 floor, which bounds nothing;
    // a shard above the chance floor still has P(min r <= r_i) > alpha.
    const failover = demo[16].judgement;
    expect(failover.emptiest?.p).toBe(1e-300);
    const below = modelOf(demo.slice(0, 17), {
      size: { columns: 120, rows: 40 },
    }).shards.rows.filter((row) => row.mark === ' ' && Number.parseFloat(row.relative) < 1);
    expect(below.length).toBeGreaterThan(0);
    for (const row of below) {
      const within = Number.parseFloat(row.relative) > (failover.floor?.relative as number);
      expect(row.p).toBe(within ? `>${formatP(failover.alpha)}` : '-');
    }
  });

  it('shows the incident mark on a shard whose incident is open', () => {
    const rows = modelOf(demo.slice(0, 6)).shards.rows;
    expect(rows[0]).toMatchObject({ shard: 'seat-17', streak: '4 !' });
  });

  it('the history follows a selection older than the strip', () => {
    // 48 windows on a 40-column strip of 29 slots; the one on show is the third.
    const windows = [...demo, ...demo];
    const slots = screenLayout({ columns: 40, rows: 24 }).historySlots;
    expect(windows.length).toBeGreaterThan(slots);
    const model = modelOf(windows, { selected: 2, paused: true, size: { columns: 40, rows: 24 } });
    expect(model.history.slots[0].selected).toBe(true);
    expect(model.history.slots).toHaveLength(slots);
    const newest = modelOf(windows, { size: { columns: 40, rows: 24 } });
    expect(newest.history.slots.at(-1)?.selected).toBe(true);
  });

  it('reads the source: state word, symbol and measurements', () => {
    const model = modelOf(demo.slice(0, 1));
    expect(model.source).toMatchObject({ symbol: '●', state: 'reading' });
    // At 80 columns: requests per second in short words; records per second and the long
    // forms only where there is room (see the 120-column check below).
    expect(model.source.facts).toBe('req 2731/s · lag 1.5 s · last 0.5 s ago · rejected 2');
  });
});

// Issue #18, the on-call view. Ground truth of the demo scenario (seed 1): seat-17 hot from
// 0:20 to 1:30 (src/scenario/built-in-scenarios.ts); incidents clear after --clear 5 clean
// windows (the judge's default), so the windows just after the hotspot are within chance
// with its incident still open.
const demoLong = scenarioViews('demo', 36);

/** The number a p cell shows (`≥0.207`, `>0.001`, `1.5e-112`), or null for `-`. */
function pValueOf(cell: string): number | null {
  const text = cell.replace(/^[≥>]/, '');
  return text === '-' ? null : Number(text.replace('<', ''));
}

describe('issue #18: shards within chance, sorting, bars', () => {
  it('a shard within chance never shows a p below alpha borrowed from a hotspot', () => {
    // Window 3 (00:00:30): seat-17 flagged at p = 1.5e-112. By the definition of the chance
    // ceiling as the (1 - alpha) quantile of the fullest shard's load (docs/model.md), any
    // shard below it has P(max r >= r_i) > alpha: that is what its p cell may say, never
    // "at least 1.5e-112", which reads as overwhelming evidence.
    for (const index of [3, 4, 5, 6]) {
      const j = demoLong[index].judgement;
      const rows = modelOf(demoLong.slice(0, index + 1), {
        size: { columns: 120, rows: 40 },
      }).shards.rows;
      for (const row of rows) {
        if (row.mark !== ' ') continue;
        const relative = Number.parseFloat(row.relative);
        const within =
          relative < j.ceiling.relative && (j.floor === null || relative > j.floor.relative);
        if (!within) continue;
        const p = pValueOf(row.p);
        expect(p, `${row.shard} ${row.p}`).not.toBeNull();
        expect(p as number, `${row.shard} ${row.p}`).toBeGreaterThanOrEqual(j.alpha);
      }
    }
  });

  it('sorted by evidence, the p column never shows a weaker value above a stronger one', () => {
    for (let index = 0; index < demoLong.length; index++) {
      const rows = modelOf(demoLong.slice(0, index + 1), {
        size: { columns: 120, rows: 40 },
      }).shards.rows.filter((row) => row.mark === ' ');
      const shown = rows.map((row) => pValueOf(row.p)).filter((p) => p !== null);
      for (let at = 1; at < shown.length; at++) {
        expect(
          shown[at],
          `window ${index}: ${rows.map((r) => r.p).join(' ')}`,
        ).toBeGreaterThanOrEqual(shown[at - 1] as number);
      }
    }
  });

  it('sorting by shard id or load chooses the rows from all shards, not the rows on show', () => {
    const views = demoLong.slice(0, 4);
    const view = views[3];
    const ids = (sort: 'shard' | 'load') =>
      modelOf(views, { sort }).shards.rows.map((row) => row.shard);
    // 64 shards seat-00 .. seat-63 in the demo universe: the first four ids, whatever their load.
    expect(ids('shard')).toEqual(['seat-00', 'seat-01', 'seat-02', 'seat-03']);
    // The four highest relative loads, recomputed from the window's counts (equal shares).
    const { judged, run } = judgeScenario('demo', 36);
    const counts = judged[3].window.counts;
    const top = Array.from(counts, (count, index) => ({ id: run.universe.idAt(index), count }))
      .sort((a, b) => b.count - a.count)
      .slice(0, 4)
      .map((entry) => entry.id);
    expect(ids('load')).toEqual(top);
    expect(view.judgement.fullest?.shard).toBe(top[0]);
  });

  it('load bars get wider with the terminal, floor and ceiling stand apart, loads within chance differ', () => {
    const small = screenLayout({ columns: 80, rows: 24 });
    const large = screenLayout({ columns: 120, rows: 40 });
    expect(large.barWidth).toBeGreaterThanOrEqual(small.barWidth);
    expect(small.barWidth).toBeGreaterThanOrEqual(20);
    for (const size of [
      { columns: 80, rows: 24 },
      { columns: 120, rows: 40 },
    ]) {
      const model = modelOf(demoLong.slice(0, 4), { size });
      const cells = model.layout.barWidth - 1;
      const cellOf = (fraction: number) => Math.round(fraction * cells);
      const bars = model.shards.rows.map((row) => row.bar);
      const floor = bars[0].floor as number;
      expect(cellOf(bars[0].ceiling) - cellOf(floor)).toBeGreaterThanOrEqual(6);
      // Two rows within chance whose loads differ by 0.03x or more do not draw alike.
      const within = model.shards.rows.filter((row) => row.mark === ' ');
      for (const a of within) {
        for (const b of within) {
          const gap = Math.abs(Number.parseFloat(a.relative) - Number.parseFloat(b.relative));
          if (gap >= 0.03) expect(cellOf(a.bar.load)).not.toBe(cellOf(b.bar.load));
        }
      }
    }
  });
});

describe('issue #18: the easing state and requests per second', () => {
  it('a window within chance while an incident is still open says EASING, not CHANCE', () => {
    const index = demoLong.findIndex(
      (view) => view.judgement.findings[0] === 'chance' && view.judgement.incidents.length > 0,
    );
    expect(index).toBeGreaterThan(0);
    const model = modelOf(demoLong.slice(0, index + 1));
    expect(model.verdict.symbol).toBe('↘');
    expect(model.verdict.headline).toMatch(/^EASING: hotspot on seat-17 still open/);
    expect(model.verdict.headline).not.toContain('CHANCE');
    expect(model.history.slots.at(-1)?.symbol).toBe('↘');
    // A plain chance window with nothing open is still CHANCE.
    const calm = demoLong.findIndex(
      (view) => view.judgement.findings[0] === 'chance' && view.judgement.incidents.length === 0,
    );
    expect(modelOf(demoLong.slice(0, calm + 1)).verdict.headline).toMatch(/^CHANCE/);
  });

  it('the source line counts requests per second, not records', () => {
    // steadySource: 64 records carrying 4096 requests in one second.
    const model = modelOf(demoLong.slice(0, 1), { size: { columns: 120, rows: 40 } });
    expect(model.source.facts).toMatch(/^requests 2731\/s · records 42\.7\/s · lag 1\.5 s/);
  });
});
