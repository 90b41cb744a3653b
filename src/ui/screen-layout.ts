import { type TerminalSize, type ScreenLayout, candidateRows } from './view-common.js';

/* Where the panels go and how big they are, from the terminal size. */

/**
 * Where the panels go. One line and one column are left free: the frame never scrolls
 * the terminal, and a line can never run into its edge unseen. Stacked up to 158 drawn
 * columns, shards beside the spread from there, where the shard panel still gives each
 * load bar more cells than an 80-column screen does. At 80x24 the table keeps 4 rows and
 * the chart 3; more lines go to both, more columns to the history and the bars.
 */
export function screenLayout(size: TerminalSize): ScreenLayout {
  const columns = Math.max(40, size.columns) - 1;
  const lines = Math.max(12, size.rows - 1);
  const sideBySide = columns >= 159;
  const evidenceLines = 2;
  const historyLines = 4;
  // header, verdict headline, evidence, model line, history, incidents, source, keys
  const fixed = 1 + 1 + evidenceLines + 1 + historyLines + 1 + 1 + 1;
  let shardRows: number;
  let chartHeight: number;
  let shardPanelWidth: number;
  let spreadPanelWidth: number;
  if (sideBySide) {
    const body = Math.max(3, lines - fixed);
    shardRows = Math.max(1, Math.min(candidateRows, body - 2));
    chartHeight = Math.max(1, Math.min(16, body - 2));
    shardPanelWidth = Math.floor(columns * 0.55);
    spreadPanelWidth = columns - shardPanelWidth - 1;
  } else {
    const body = Math.max(2, lines - fixed - 4);
    shardRows = Math.max(1, Math.min(candidateRows, Math.ceil(body * 0.55)));
    chartHeight = Math.max(1, Math.min(16, body - shardRows));
    shardRows = Math.min(candidateRows, body - chartHeight);
    shardPanelWidth = columns;
    spreadPanelWidth = columns;
  }
  const shardIdWidth = shardPanelWidth >= 100 ? 20 : 12;
  const historyLabelWidth = 11;
  return {
    columns,
    lines,
    sideBySide,
    shardPanelWidth,
    spreadPanelWidth,
    evidenceLines,
    shardRows,
    chartHeight,
    historySlots: Math.max(8, columns - historyLabelWidth),
    historyLabelWidth,
    shardIdWidth,
    barWidth: Math.max(8, shardPanelWidth - shardRowCells(shardIdWidth)),
  };
}

/** Cells of the shard table's number columns, in order after the mark and the id. */
export const shardColumns = { load: 7, fair: 8, relative: 7, p: 10, streak: 6 } as const;

/** Cells of a shard row before its bar: mark, id, the number columns, the spaces between. */
export function shardRowCells(idWidth: number): number {
  const { load, fair, relative, p, streak } = shardColumns;
  return 1 + idWidth + 1 + load + fair + relative + p + 1 + streak + 1;
}
