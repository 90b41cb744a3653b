import { describe, expect, it } from 'vitest';
import { headerView } from '../../src/ui/header-view.js';
import { screenLayout } from '../../src/ui/screen-layout.js';
import type { ScreenState, WindowView } from '../../src/ui/view-common.js';

/** A judged window as far as the header reads it: shards and alpha of its judgement. */
const judged = { judgement: { shards: 64, alpha: 0.001 } } as unknown as WindowView;

function state(overrides: Partial<ScreenState> = {}): ScreenState {
  return {
    context: {
      sourceLabel: 'scenario demo (seed 1)',
      windowMs: 10_000,
      latenessMs: 2_000,
      confirm: 3,
      clear: 5,
      maxDetectable: 3,
    },
    windows: [],
    selected: null,
    paused: false,
    sort: 'evidence',
    help: false,
    source: {
      state: 'reading',
      requestsPerSecond: null,
      recordsPerSecond: null,
      lagMs: null,
      lastRecordAgeMs: null,
      records: 0,
      rejected: 0,
      late: 0,
    },
    size: { columns: 80, rows: 24 },
    ...overrides,
  };
}

describe('headerView', () => {
  it('before the first window at 80 columns: no room for the name beside the facts', () => {
    // 79 cells less '● LIVE · waiting for the first window' (37) and a space leave 41;
    // 'shardwise · ' and the facts (37) would take 49.
    expect(headerView(state(), null, screenLayout({ columns: 80, rows: 24 }))).toEqual({
      title: '',
      facts: 'scenario demo (seed 1) · 10 s windows',
      mode: '● LIVE',
      modeTone: 'chance',
      position: 'waiting for the first window',
    });
  });

  it('paused on an older window at 120 columns: the name, every fact, which window', () => {
    const windows = Array.from({ length: 12 }, () => judged);
    expect(
      headerView(state({ windows, paused: true }), 3, screenLayout({ columns: 120, rows: 40 })),
    ).toEqual({
      title: 'shardwise',
      facts: 'scenario demo (seed 1) · 64 shards · 10 s windows · alpha 0.001',
      mode: '‖ PAUSED',
      modeTone: 'uneven',
      position: 'window 4 of 12 · 8 newer',
    });
  });

  it('ended, newest on show, at 60 columns: short forms first, then the source goes', () => {
    const windows = Array.from({ length: 12 }, () => judged);
    const source = { ...state().source, state: 'ended' as const };
    // 59 cells less '■ ENDED · newest of 12' (22) and a space leave 36.
    expect(
      headerView(state({ windows, source }), 11, screenLayout({ columns: 60, rows: 24 })),
    ).toEqual({
      title: '',
      facts: '64 shards · 10 s win · α 0.001',
      mode: '■ ENDED',
      modeTone: 'muted',
      position: 'newest of 12',
    });
  });
});
