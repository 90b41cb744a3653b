import { formatCount, formatPlain, formatRelative } from './display-numbers.js';
import { displayWidth, fitParts, type LinePart } from './terminal-text.js';
import {
  type Tone,
  type WindowView,
  type ScreenLayout,
  fineBins,
  coarseBinChoices,
  cellsPerBin,
} from './view-common.js';

/* The spread chart's view model: seen and predicted shards per band of relative load. */

export interface SpreadBin {
  /** Fractions of the chart height. */
  readonly observed: number;
  readonly expected: number;
  readonly tone: Tone;
}

export interface SpreadView {
  readonly title: string;
  readonly legend: string;
  readonly bins: readonly SpreadBin[];
  /** Composed to the chart's width: edge labels, the fair share and the ceiling. */
  readonly axis: string;
  /** Shown instead of the chart when there is nothing to draw. */
  readonly empty: string | null;
}

export function spreadView(view: WindowView | null, layout: ScreenLayout): SpreadView {
  const title = 'Spread';
  const room = layout.spreadPanelWidth - displayWidth(`${title} · `);
  const legendParts: LinePart[] = [
    { text: '█ shards seen', short: '█ seen', rank: 0 },
    { text: '⣿ random placement predicts', short: '⣿ predicted', rank: 0 },
  ];
  if (view === null || view.histogram === null) {
    return {
      title,
      legend: fitParts(legendParts, room, '  '),
      bins: [],
      axis: '',
      empty: view === null ? 'No window judged yet.' : 'No requests: nothing to draw.',
    };
  }
  const fine = view.histogram;
  const inner =
    coarseBinChoices.find((bins) => (bins + 2) * cellsPerBin <= layout.spreadPanelWidth) ?? 6;
  const group = fineBins / inner;
  const observed: number[] = [fine.observed[0]];
  const expected: number[] = [fine.expected[0]];
  for (let bin = 0; bin < inner; bin++) {
    let seen = 0;
    let predicted = 0;
    for (let k = 1 + bin * group; k <= (bin + 1) * group; k++) {
      seen += fine.observed[k];
      predicted += fine.expected[k];
    }
    observed.push(seen);
    expected.push(predicted);
  }
  observed.push(fine.observed[fine.bins + 1]);
  expected.push(fine.expected[fine.bins + 1]);
  const tallest = Math.max(1, ...observed, ...expected);
  const j = view.judgement;
  const width = (fine.high - fine.low) / inner;
  const edgeOf = (bin: number) => fine.low + (bin - 1) * width;
  const bins = observed.map((seen, bin): SpreadBin => {
    const start = bin === 0 ? -Infinity : edgeOf(bin);
    const end = bin === inner + 1 ? Infinity : edgeOf(bin + 1);
    const tone: Tone =
      seen === 0
        ? 'plain'
        : start >= j.ceiling.relative
          ? 'hotspot'
          : j.floor !== null && end <= j.floor.relative
            ? 'cold'
            : 'plain';
    return { observed: seen / tallest, expected: expected[bin] / tallest, tone };
  });
  const axis = composeAxis(inner, fine.low, fine.high, j.ceiling.relative, layout.spreadPanelWidth);
  const legend = fitParts(legendParts, room, '  ');
  const notes: LinePart[] = [
    {
      text: `tallest ${formatPlain(tallest)} shards`,
      short: `top ${formatPlain(tallest)}`,
      rank: 3,
    },
  ];
  if (fine.predictedRequests < j.requests) {
    notes.push({
      text: `predicted on ${formatCount(fine.predictedRequests)} judged req`,
      short: `on ${formatCount(fine.predictedRequests)} judged req`,
      rank: 1,
    });
  }
  if (fine.groupedShares) notes.push({ text: 'shares grouped', rank: 2 });
  if (!view.sharesMatchVerdict) notes.push({ text: 'declared shares', rank: 1 });
  const withNotes = fitParts([{ text: legend, rank: 0 }, ...notes], room);
  return { title, legend: withNotes, bins, axis, empty: null };
}

/** The axis under the chart: the edge bins' bounds, 1x and the ceiling, where they fall. */
function composeAxis(
  inner: number,
  low: number,
  high: number,
  ceiling: number,
  width: number,
): string {
  const cells = Array.from({ length: Math.min(width, (inner + 2) * cellsPerBin) }, () => ' ');
  const fits = (start: number, text: string) => {
    if (start < 0 || start + displayWidth(text) > cells.length) return false;
    for (let i = 0; i < text.length; i++) if (cells[start + i] !== ' ') return false;
    return true;
  };
  const put = (start: number, text: string) => {
    for (let i = 0; i < text.length; i++) cells[start + i] = text[i];
  };
  // A label starts at its mark, or ends at it when that is the only way it fits.
  const place = (at: number, text: string, mirrored = text) => {
    const start = Math.max(0, Math.min(cells.length - displayWidth(text), at));
    if (fits(start, text)) put(start, text);
    else if (fits(at - displayWidth(mirrored) + 1, mirrored))
      put(at - displayWidth(mirrored) + 1, mirrored);
  };
  const cellOf = (relative: number) =>
    cellsPerBin * (1 + Math.min(inner, Math.max(0, ((relative - low) / (high - low)) * inner)));
  place(0, `<${formatRelative(low)}`);
  place(cells.length - 7, `>${formatRelative(high)}`);
  const ceilingAt = Math.round(cellOf(ceiling)) - 1;
  place(ceilingAt, `┃${formatRelative(ceiling)} ceiling`, `ceiling ${formatRelative(ceiling)}┃`);
  place(Math.round(cellOf(1)) - 1, '|1x', '1x|');
  return cells.join('');
}
