import { describe, expect, it } from 'vitest';
import { formatP } from '../../src/ui/display-numbers.js';
import { screenLayout } from '../../src/ui/view-model.js';
import { modelOf, scenarioViews } from './judged-windows.js';

const demo = scenarioViews('demo', 24);

describe('screenLayout', () => {
  it('at 80x24 stacks the panels in 23 lines: 4 shard rows, a 3-row chart', () => {
    const layout = screenLayout({ columns: 80, rows: 24 });
    expect(layout).toMatchObject({ lines: 23, sideBySide: false, shardRows: 4, chartHeight: 3 });
    // header 1, verdict 4, shards 2 + 4, spread 2 + 3, history 4, incidents, source, keys
    expect(1 + 4 + (2 + layout.shardRows) + (2 + layout.chartHeight) + 4 + 3).toBe(23);
    expect(layout.historySlots).toBe(80 - layout.historyLabelWidth);
  });

  it('gives more room to rows, chart and history when the terminal has it', () => {
    const tall = screenLayout({ columns: 80, rows: 50 });
    expect(tall.shardRows).toBeGreaterThan(4);
    expect(tall.chartHeight).toBeGreaterThan(3);
    const wide = screenLayout({ columns: 200, rows: 50 });
    expect(wide.sideBySide).toBe(true);
    expect(wide.shardPanelWidth + 1 + wide.spreadPanelWidth).toBe(200);
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
    const bounds = new Set([
      `≥${formatP(view.judgement.fullest?.p as number)}`,
      `≥${formatP(view.judgement.emptiest?.p as number)}`,
    ]);
    const exact = new Set([view.judgement.fullest?.shard, view.judgement.emptiest?.shard]);
    for (const row of rows.slice(1)) {
      if (exact.has(row.shard)) expect(row.p).not.toContain('≥');
      else expect(bounds).toContain(row.p);
    }
    // Window 16: the emptiest (dead) shard's p is at the 1e-300 floor, which bounds nothing.
    const failover = demo[16].judgement;
    expect(failover.emptiest?.p).toBe(1e-300);
    const below = modelOf(demo.slice(0, 17)).shards.rows.filter(
      (row) => row.mark === ' ' && Number.parseFloat(row.relative) < 1,
    );
    expect(below.length).toBeGreaterThan(0);
    for (const row of below) expect(row.p).toBe('-');
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
    expect(model.source.facts).toBe(
      'records 42.7/s · lag 1.5 s · last record 0.5 s ago · rejected 2 · late 5',
    );
  });
});
