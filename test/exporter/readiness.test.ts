import { describe, expect, it } from 'vitest';
import { readiness, type ReadinessFacts } from '../../src/exporter/readiness.js';

const facts: ReadinessFacts = {
  now: 100_000,
  startedAt: 40_000,
  recordsSeen: 10,
  lastWindowJudgedAt: 95_000,
  sourceStalled: false,
  hopMs: 10_000,
  latenessMs: 2_000,
};

describe('readiness', () => {
  it('is ready while records come and windows close within two hops plus the lateness', () => {
    expect(readiness(facts)).toEqual({ ready: true, reasons: ['ready'] });
    // Allowed: 2 x 10 s + 2 s + 1 s of slack = 23 s since the latest window.
    expect(readiness({ ...facts, lastWindowJudgedAt: 77_000 }).ready).toBe(true);
    expect(readiness({ ...facts, lastWindowJudgedAt: 76_999 })).toEqual({
      ready: false,
      reasons: ['windows: the latest closed 23.0 s ago (due every 10.0 s, allowed 23.0 s)'],
    });
  });

  it('is not ready before a record or a window, nor while the source is stalled', () => {
    expect(readiness({ ...facts, recordsSeen: 0, lastWindowJudgedAt: Number.NaN })).toEqual({
      ready: false,
      reasons: ['source: no record received in 60.0 s since start', 'windows: none closed yet'],
    });
    expect(readiness({ ...facts, sourceStalled: true })).toEqual({
      ready: false,
      reasons: ['source: stalled (no records for longer than a window plus the lateness)'],
    });
  });
});
