import { describe, expect, it } from 'vitest';
import { incidentView } from '../../src/ui/incident-view.js';
import { screenLayout } from '../../src/ui/screen-layout.js';
import type { WindowView } from '../../src/ui/view-common.js';

/** A judged window as far as the incident line reads it. */
function windowWith(
  incidents: { shard: string; finding: 'hotspot' | 'cold'; since: string; windows: number }[],
): WindowView {
  return { judgement: { incidents, falseIncidentsPerDay: 0.02 } } as unknown as WindowView;
}

const hot = {
  shard: 'seat-17',
  finding: 'hotspot',
  since: '2025-12-01T00:00:20.000Z',
  windows: 4,
} as const;
const cold = {
  shard: 'seat-42',
  finding: 'cold',
  since: '2025-12-01T00:01:00.000Z',
  windows: 2,
} as const;

describe('incidentView', () => {
  it('before any window: none open, nothing else', () => {
    expect(incidentView(null, screenLayout({ columns: 80, rows: 24 }))).toEqual({
      items: [],
      none: 'none open',
      falseRate: '',
      more: '',
    });
  });

  it('none open, with the false-incident rate in full where it fits, else short', () => {
    expect(incidentView(windowWith([]), screenLayout({ columns: 80, rows: 24 }))).toEqual({
      items: [],
      none: 'none open',
      falseRate: 'by chance about 0.02 false incidents a day (approx.)',
      more: '',
    });
    // 39 cells less 'Incidents ' leave 29: 'none open · chance: 0.02 false a day' is 36.
    expect(incidentView(windowWith([]), screenLayout({ columns: 40, rows: 12 })).falseRate).toBe(
      '',
    );
  });

  it('open incidents in full words, the rate after them when it fits', () => {
    expect(incidentView(windowWith([hot]), screenLayout({ columns: 120, rows: 40 }))).toEqual({
      items: [{ symbol: '▲', tone: 'hotspot', text: 'hotspot seat-17 since 00:00:20 (4 windows)' }],
      none: null,
      falseRate: 'by chance about 0.02 false incidents a day (approx.)',
      more: '',
    });
    // At 80 columns (69 cells after the label) neither form of the rate fits beside it.
    expect(incidentView(windowWith([hot]), screenLayout({ columns: 80, rows: 24 })).falseRate).toBe(
      '',
    );
  });

  it('full words for as many as fit before short forms, then the count alone', () => {
    // 69 cells: both in full take 44 + 3 + 39 = 86; the first in full and '+1 more', 54.
    expect(incidentView(windowWith([hot, cold]), screenLayout({ columns: 80, rows: 24 }))).toEqual({
      items: [{ symbol: '▲', tone: 'hotspot', text: 'hotspot seat-17 since 00:00:20 (4 windows)' }],
      none: null,
      falseRate: '',
      more: '+1 more',
    });
    // At 120 columns (109 cells) both fit in full.
    expect(
      incidentView(windowWith([hot, cold]), screenLayout({ columns: 120, rows: 40 })).items.map(
        (item) => item.text,
      ),
    ).toEqual([
      'hotspot seat-17 since 00:00:20 (4 windows)',
      'cold seat-42 since 00:01:00 (2 windows)',
    ]);
    // At 50 columns (39 cells) neither fits in full; both short take 51, one short and
    // '+1 more' 34.
    expect(incidentView(windowWith([hot, cold]), screenLayout({ columns: 50, rows: 12 }))).toEqual({
      items: [{ symbol: '▲', tone: 'hotspot', text: 'seat-17 since 00:00:20' }],
      none: null,
      falseRate: '',
      more: '+1 more',
    });
    // 29 cells: one short item (24) and '+1 more' would take 34; so the count alone.
    const narrow = incidentView(windowWith([hot, cold]), screenLayout({ columns: 40, rows: 12 }));
    expect(narrow).toEqual({ items: [], none: null, falseRate: '', more: '2 open' });
  });
});
