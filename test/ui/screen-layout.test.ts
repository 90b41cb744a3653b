import { describe, expect, it } from 'vitest';
import { screenLayout, shardColumns, shardRowCells } from '../../src/ui/screen-layout.js';

// Worked by hand from screenLayout: one column and one line kept free; 12 fixed lines
// (header, headline, 2 evidence, model, 4 history, incidents, source, keys); stacked
// panels share the rest less their 4 title and heading lines, 55% to the table.
describe('screenLayout', () => {
  it('80x24: stacked, 4 shard rows and a 3-row chart, bars of 25 cells', () => {
    expect(screenLayout({ columns: 80, rows: 24 })).toEqual({
      columns: 79,
      lines: 23,
      sideBySide: false,
      shardPanelWidth: 79,
      spreadPanelWidth: 79,
      evidenceLines: 2,
      shardRows: 4,
      chartHeight: 3,
      historySlots: 68,
      historyLabelWidth: 11,
      shardIdWidth: 12,
      barWidth: 25,
    });
  });

  it('160x40: side by side from 159 drawn columns, the table 55% of them', () => {
    expect(screenLayout({ columns: 160, rows: 40 })).toEqual({
      columns: 159,
      lines: 39,
      sideBySide: true,
      shardPanelWidth: 87,
      spreadPanelWidth: 71,
      evidenceLines: 2,
      shardRows: 25,
      chartHeight: 16,
      historySlots: 148,
      historyLabelWidth: 11,
      shardIdWidth: 12,
      barWidth: 33,
    });
    expect(screenLayout({ columns: 159, rows: 40 }).sideBySide).toBe(false);
  });

  it('a wide shard panel gets 20-cell ids; the smallest sizes are 40 columns and 12 lines', () => {
    const wide = screenLayout({ columns: 200, rows: 50 });
    expect(wide.shardPanelWidth).toBe(109);
    expect(wide.shardIdWidth).toBe(20);
    expect(wide.barWidth).toBe(109 - shardRowCells(20));
    const tiny = screenLayout({ columns: 10, rows: 5 });
    expect([tiny.columns, tiny.lines, tiny.shardRows, tiny.chartHeight, tiny.barWidth]).toEqual([
      39, 12, 1, 1, 8,
    ]);
  });
});

describe('shardRowCells', () => {
  it('mark, id, a space, the number columns, a space, the streak, a space', () => {
    expect(shardColumns).toEqual({ load: 7, fair: 8, relative: 7, p: 10, streak: 6 });
    expect(shardRowCells(12)).toBe(1 + 12 + 1 + 7 + 8 + 7 + 10 + 1 + 6 + 1);
    expect(shardRowCells(20)).toBe(62);
  });
});
