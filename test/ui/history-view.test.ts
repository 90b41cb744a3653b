import { describe, expect, it } from 'vitest';
import { historyView } from '../../src/ui/history-view.js';
import { screenLayout } from '../../src/ui/screen-layout.js';
import type { WindowView } from '../../src/ui/view-common.js';

const start = Date.UTC(2025, 11, 1);

/** A judged window as far as the history reads it. */
function windowAt(
  index: number,
  fullest: number,
  finding: string = 'chance',
  extra: { pattern?: string; incidents?: unknown[] } = {},
): WindowView {
  return {
    startMs: start + index * 10_000,
    endMs: start + (index + 1) * 10_000,
    judgement: {
      pattern: extra.pattern ?? null,
      findings: [finding],
      incidents: extra.incidents ?? [],
      fullest: { relative: fullest },
      ceiling: { relative: 1.2 },
    },
  } as unknown as WindowView;
}

describe('historyView', () => {
  it('levels: 0.5 at the ceiling, 1 twice as far past 1x, clamped to [0, 1]', () => {
    // Ceiling 1.2x: (fullest - 1) / 0.2 / 2.
    const windows = [1.1, 1.2, 1.4, 0.9, 2].map((fullest, index) => windowAt(index, fullest));
    const view = historyView(windows, 4, screenLayout({ columns: 120, rows: 40 }));
    expect(view.slots.map((slot) => slot.level)).toEqual(
      [0.25, 0.5, 1, 0, 1].map((level) => expect.closeTo(level, 12)),
    );
    expect(view.slots.map((slot) => slot.selected)).toEqual([false, false, false, false, true]);
  });

  it('symbols and tones: the finding, the pattern before it, easing while an incident stays open', () => {
    const windows = [
      windowAt(0, 1.5, 'hotspot'),
      windowAt(1, 1.5, 'hotspot', { pattern: 'failover' }),
      windowAt(2, 1, 'chance', { incidents: [{}] }),
      windowAt(3, 1, 'too little traffic'),
    ];
    const view = historyView(windows, 3, screenLayout({ columns: 120, rows: 40 }));
    expect(view.slots.map((slot) => [slot.symbol, slot.tone])).toEqual([
      ['▲', 'hotspot'],
      ['◆', 'failover'],
      ['↘', 'easing'],
      ['?', 'thin'],
    ]);
  });

  it('the span with the legend: in full where it fits, then shorter, the legend never cut', () => {
    const windows = [0, 1, 2].map((index) => windowAt(index, 1));
    // 109 cells at 120 columns: '3 windows, 00:00:00–00:00:30 UTC · ' and the legend take 117.
    expect(historyView(windows, 2, screenLayout({ columns: 120, rows: 40 })).span).toBe(
      '3 windows to 00:00:30 · ▲ hotspot  ▼ cold  ◆ failover  ~ uneven  ↘ easing  · chance  ? too little traffic',
    );
    // 69 cells at 80 columns: the short legend alone (56) is what fits.
    expect(historyView(windows, 2, screenLayout({ columns: 80, rows: 24 })).span).toBe(
      '▲hot ▼cold ◆failover ~uneven ↘easing ·chance ?too little',
    );
    // Before any window: 'no windows yet' beside the legend at 120 columns (98 cells).
    expect(historyView([], null, screenLayout({ columns: 120, rows: 40 }))).toEqual({
      slots: [],
      span: 'no windows yet · ▲ hotspot  ▼ cold  ◆ failover  ~ uneven  ↘ easing  · chance  ? too little traffic',
    });
  });

  it('the newest windows, unless the one on show is older: then the strip starts at it', () => {
    // 68 slots at 80 columns; 70 windows.
    const windows = Array.from({ length: 70 }, (_, index) => windowAt(index, 1));
    const newest = historyView(windows, 69, screenLayout({ columns: 80, rows: 24 }));
    expect(newest.slots).toHaveLength(68);
    expect(newest.slots[67].selected).toBe(true);
    const oldest = historyView(windows, 0, screenLayout({ columns: 80, rows: 24 }));
    expect(oldest.slots).toHaveLength(68);
    expect(oldest.slots[0].selected).toBe(true);
  });
});
