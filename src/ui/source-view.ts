import { formatCount, formatDuration, formatRate } from './display-numbers.js';
import { displayWidth, fitParts, type LinePart } from './terminal-text.js';
import type { Tone, SourceState, SourceReading, ScreenLayout } from './view-common.js';

/* The source line's view model. */

export interface SourceView {
  readonly symbol: string;
  readonly state: string;
  readonly tone: Tone;
  readonly facts: string;
}

const sourceSymbols: Record<SourceState, { symbol: string; tone: Tone }> = {
  connecting: { symbol: '◌', tone: 'uneven' },
  connected: { symbol: '●', tone: 'chance' },
  reading: { symbol: '●', tone: 'chance' },
  quiet: { symbol: '◐', tone: 'uneven' },
  disconnected: { symbol: '✕', tone: 'hotspot' },
  ended: { symbol: '■', tone: 'muted' },
};

export function sourceView(source: SourceReading, layout: ScreenLayout): SourceView {
  const symbol = sourceSymbols[source.state];
  const room = layout.columns - displayWidth(`Source ${symbol.symbol} ${source.state} · `);
  const requests = source.requestsPerSecond;
  const records = source.recordsPerSecond;
  const parts: LinePart[] = [
    requests === null
      ? { text: 'requests -/s', short: 'req -/s', rank: 0 }
      : {
          text: `requests ${formatRate(requests)}`,
          short: `req ${formatRate(requests)}`,
          rank: 0,
        },
  ];
  // Records per second only where they differ from requests: count reports carry many each.
  if (records !== null && requests !== null && formatRate(records) !== formatRate(requests)) {
    parts.push({ text: `records ${formatRate(records)}`, rank: 4 });
  }
  parts.push(
    {
      text: source.lagMs === null ? 'lag -' : `lag ${formatDuration(Math.max(0, source.lagMs))}`,
      rank: 1,
    },
    source.lastRecordAgeMs === null
      ? { text: 'no record yet', rank: 2 }
      : {
          text: `last record ${formatDuration(Math.max(0, source.lastRecordAgeMs))} ago`,
          short: `last ${formatDuration(Math.max(0, source.lastRecordAgeMs))} ago`,
          rank: 2,
        },
    { text: `rejected ${formatCount(source.rejected)}`, rank: 3 },
    { text: `late ${formatCount(source.late)}`, rank: 3 },
  );
  return { ...symbol, state: source.state, facts: fitParts(parts, room) };
}
