import type { Judgement } from '../judge/judgement.js';
import { type ShardCandidate, compareIds } from '../judge/shard-candidates.js';
import { formatCount, formatP, formatRelative } from './display-numbers.js';
import { shardColumns } from './screen-layout.js';
import { fitParts, padWidth, wireLabel, type LinePart } from './terminal-text.js';
import {
  type ShardSort,
  type Tone,
  type ScreenContext,
  type WindowView,
  type ScreenLayout,
} from './view-common.js';

/* The shard table's view model: which shards get a row, in what order, and their bars. */

/** A load bar, as fractions of the bar's length. */
export interface LoadBar {
  readonly load: number;
  readonly ceiling: number;
  /** Null when the cold tests are off. */
  readonly floor: number | null;
}

export interface ShardRowView {
  readonly mark: string;
  readonly tone: Tone;
  readonly shard: string;
  readonly load: string;
  readonly fair: string;
  readonly relative: string;
  readonly p: string;
  readonly streak: string;
  readonly bar: LoadBar;
}

export interface ShardTableView {
  readonly title: string;
  /** The column names and, over the bars, their scale; fitted to the panel. */
  readonly heading: string;
  readonly rows: readonly ShardRowView[];
  /** Shown instead of rows before the first window. */
  readonly empty: string | null;
}

export function shardTableView(
  view: WindowView | null,
  sort: ShardSort,
  layout: ScreenLayout,
  context: ScreenContext,
): ShardTableView {
  const width = layout.shardPanelWidth;
  const titleParts: LinePart[] = [
    { text: 'Shards', rank: 0 },
    { text: `sorted by ${sort} (s)`, short: `by ${sort} (s)`, rank: 1 },
    {
      text: `streak ${context.confirm} opens an incident (!)`,
      short: `${context.confirm} in a row open an incident`,
      rank: 2,
    },
  ];
  const heading = tableHeading(layout, null);
  if (view === null) {
    return {
      title: fitParts(titleParts, width),
      heading,
      rows: [],
      empty: 'No window judged yet.',
    };
  }
  const j = view.judgement;
  if (!view.sharesMatchVerdict) {
    titleParts.push({ text: 'learned shares: flagged and extreme shards only', rank: 3 });
  }
  const title = fitParts(titleParts, width);
  if (view.candidates.length === 0) {
    return { title, heading, rows: [], empty: 'No requests in this window.' };
  }
  // Each sort chooses its rows from all shards (the window view keeps the best of each).
  const ordered = [...view.candidates]
    .sort(
      sort === 'evidence'
        ? byEvidence(j)
        : sort === 'load'
          ? (a, b) => b.relative - a.relative || compareIds(a.shard, b.shard)
          : (a, b) => compareIds(a.shard, b.shard),
    )
    .slice(0, layout.shardRows);
  const scale = barScale(j, ordered);
  const rows = ordered.map((row): ShardRowView => {
    const tone: Tone =
      row.finding === 'hotspot' ? 'hotspot' : row.finding === 'cold' ? 'cold' : 'plain';
    return {
      mark: row.finding === 'hotspot' ? '▲' : row.finding === 'cold' ? '▼' : ' ',
      tone,
      shard: wireLabel(row.shard, layout.shardIdWidth),
      load: formatCount(row.count),
      fair: row.fairShare === null ? '-' : formatCount(row.fairShare),
      relative: formatRelative(row.relative),
      p: row.p === null ? '-' : `${row.pBound}${formatP(row.p)}`,
      streak: row.finding === null ? '-' : `${row.streak}${row.incident ? ' !' : ''}`,
      bar: {
        load: scale.at(row.relative),
        ceiling: scale.at(j.ceiling.relative),
        floor: j.floor === null ? null : scale.at(j.floor.relative),
      },
    };
  });
  return { title, heading: tableHeading(layout, scale), rows, empty: null };
}

/**
 * Evidence first: flagged shards by adjusted p, then every other shard by what its p column
 * says (an exact p, or the bound it is known to pass), ties by how far it is toward its
 * side's chance limit. So the p column reads from strongest to weakest evidence down the
 * table, whatever side a shard is on.
 */
function byEvidence(j: Judgement): (a: ShardCandidate, b: ShardCandidate) => number {
  const towardLimit = (row: ShardCandidate) =>
    row.relative >= 1
      ? (row.relative - 1) / Math.max(1e-9, j.ceiling.relative - 1)
      : (1 - row.relative) / Math.max(1e-9, 1 - (j.floor?.relative ?? 2 - j.ceiling.relative));
  return (a, b) => {
    const flaggedFirst = (a.finding === null ? 1 : 0) - (b.finding === null ? 1 : 0);
    if (flaggedFirst !== 0) return flaggedFirst;
    const byP = (a.p ?? 2) - (b.p ?? 2);
    if (byP !== 0) return byP;
    // At an equal p an exact value is the one that bounds the others.
    const exactFirst = (a.pBound === '' ? 0 : 1) - (b.pBound === '' ? 0 : 1);
    if (exactFirst !== 0) return exactFirst;
    return towardLimit(b) - towardLimit(a) || compareIds(a.shard, b.shard);
  };
}

/** Where a relative load falls along the load bars, as a fraction of a bar. */
interface BarScale {
  readonly low: number;
  readonly high: number;
  readonly ceiling: number;
  /** Null when the cold tests are off. */
  readonly floor: number | null;
  at(relative: number): number;
}

/**
 * The load bars' scale: from a little below the lowest of the floor and the rows on show to a
 * little past the highest of the ceiling and the rows, not from zero, so shards within
 * chance differ visibly and the floor and ceiling marks stand apart. The band up to the
 * ceiling keeps at least half the bar however far a hotspot runs past it; beyond the
 * ceiling the scale is linear again to the highest load.
 */
function barScale(j: Judgement, rows: readonly ShardCandidate[]): BarScale {
  const ceiling = j.ceiling.relative;
  const floor = j.floor?.relative ?? Math.max(0, 2 - ceiling);
  const loads = rows.map((row) => row.relative).filter((value) => Number.isFinite(value));
  const lowest = Math.min(floor, 1, ...loads);
  const highest = Math.max(ceiling, ...loads);
  const low = Math.max(0, lowest - 0.1 * (ceiling - lowest));
  const high = highest + 0.05 * (highest - low);
  const band = Math.max(0.5, (ceiling - low) / (high - low));
  return {
    low,
    high,
    ceiling,
    floor: j.floor?.relative ?? null,
    at(relative) {
      const value = Math.max(low, Math.min(high, relative));
      return value <= ceiling
        ? ((value - low) / Math.max(1e-12, ceiling - low)) * band
        : band + ((value - ceiling) / Math.max(1e-12, high - ceiling)) * (1 - band);
    },
  };
}

/** The table's heading; over the bars, the scale's left end, 1x and the ceiling mark. */
function tableHeading(layout: ScreenLayout, scale: BarScale | null): string {
  const { load, fair, relative, p, streak } = shardColumns;
  const numbers =
    ' ' +
    padWidth('shard', layout.shardIdWidth + 1) +
    padWidth('load', load, 'right') +
    padWidth('fair', fair, 'right') +
    padWidth('rel', relative, 'right') +
    padWidth('adj p', p, 'right') +
    ' ' +
    padWidth('streak', streak) +
    ' ';
  const cells = layout.barWidth;
  if (scale === null)
    return (
      numbers + fitParts([{ text: 'load vs chance ┃ceiling', short: '┃ceiling', rank: 0 }], cells)
    );
  const at = (relative: number) => Math.round(scale.at(relative) * (cells - 1));
  return (
    numbers +
    labelRow(cells, [
      {
        at: at(scale.ceiling),
        text: `┃${formatRelative(scale.ceiling)}`,
        mirrored: `${formatRelative(scale.ceiling)}┃`,
      },
      { at: 0, text: formatRelative(scale.low) },
      { at: at(1), text: '1x' },
      ...(scale.floor === null
        ? []
        : [
            {
              at: at(scale.floor),
              text: `╎${formatRelative(scale.floor)}`,
              mirrored: `${formatRelative(scale.floor)}╎`,
            },
          ]),
    ])
  ).trimEnd();
}

/**
 * A row of labels, each starting at its cell or, when only that fits, ending at it; a label
 * that would overlap one placed before it is left out whole. O(width x labels).
 */
function labelRow(
  width: number,
  labels: readonly { at: number; text: string; mirrored?: string }[],
): string {
  const cells = Array.from({ length: width }, () => ' ');
  const free = (start: number, text: string) => {
    if (start < 0 || start + text.length > width) return false;
    for (let i = 0; i < text.length; i++) if (cells[start + i] !== ' ') return false;
    // One blank cell between labels, so two never read as one.
    return (
      (start === 0 || cells[start - 1] === ' ') &&
      (start + text.length >= width || cells[start + text.length] === ' ')
    );
  };
  const put = (start: number, text: string) => {
    for (let i = 0; i < text.length; i++) cells[start + i] = text[i];
  };
  for (const label of labels) {
    const mirrored = label.mirrored ?? label.text;
    const ending = label.at - mirrored.length + 1;
    const starting = Math.max(0, Math.min(width - label.text.length, label.at));
    if (free(starting, label.text)) put(starting, label.text);
    else if (free(ending, mirrored)) put(ending, mirrored);
  }
  return cells.join('');
}
