import { describe, expect, it } from 'vitest';
import { screenLayout } from '../../src/ui/screen-layout.js';
import { sourceView } from '../../src/ui/source-view.js';
import type { SourceReading } from '../../src/ui/view-common.js';

const reading: SourceReading = {
  state: 'reading',
  requestsPerSecond: 6400,
  recordsPerSecond: 64,
  lagMs: 1234,
  lastRecordAgeMs: 300,
  records: 1000,
  rejected: 2,
  late: 5,
};

describe('sourceView', () => {
  it('every measurement when there is room; records/s only where they differ from requests/s', () => {
    expect(sourceView(reading, screenLayout({ columns: 120, rows: 40 }))).toEqual({
      symbol: '●',
      state: 'reading',
      tone: 'chance',
      facts:
        'requests 6400/s · records 64.0/s · lag 1.2 s · last record 0.3 s ago · rejected 2 · late 5',
    });
    expect(
      sourceView({ ...reading, recordsPerSecond: 6400 }, screenLayout({ columns: 120, rows: 40 }))
        .facts,
    ).toBe('requests 6400/s · lag 1.2 s · last record 0.3 s ago · rejected 2 · late 5');
  });

  it('before two readings and before any record', () => {
    const none: SourceReading = {
      state: 'connecting',
      requestsPerSecond: null,
      recordsPerSecond: null,
      lagMs: null,
      lastRecordAgeMs: null,
      records: 0,
      rejected: 0,
      late: 0,
    };
    expect(sourceView(none, screenLayout({ columns: 120, rows: 40 }))).toEqual({
      symbol: '◌',
      state: 'connecting',
      tone: 'uneven',
      facts: 'requests -/s · lag - · no record yet · rejected 0 · late 0',
    });
  });

  it('the states’ symbols and tones', () => {
    const layout = screenLayout({ columns: 120, rows: 40 });
    const of = (state: SourceReading['state']) => {
      const { symbol, tone } = sourceView({ ...reading, state }, layout);
      return [symbol, tone];
    };
    expect(of('connected')).toEqual(['●', 'chance']);
    expect(of('quiet')).toEqual(['◐', 'uneven']);
    expect(of('disconnected')).toEqual(['✕', 'hotspot']);
    expect(of('ended')).toEqual(['■', 'muted']);
  });

  it('at 40 columns the rest goes, highest rank first; requests/s stays, in its short form', () => {
    // 39 drawn cells less 'Source ● reading · ' (19) leave 20; with the lag it would be 22.
    expect(sourceView(reading, screenLayout({ columns: 40, rows: 12 })).facts).toBe('req 6400/s');
  });
});
