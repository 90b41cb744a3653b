import { describe, expect, it } from 'vitest';
import { SourceMeter } from '../../src/ui/source-meter.js';

describe('SourceMeter', () => {
  it('measures requests and records per second over its span, the lag and the last record age', () => {
    let now = 1_000_000;
    const meter = new SourceMeter('reading', () => now, 5000);
    expect(meter.reading()).toMatchObject({
      state: 'reading',
      recordsPerSecond: null,
      lagMs: null,
    });
    for (let second = 1; second <= 10; second++) {
      now += 1000;
      // 64 count reports a second carrying 40 requests each, each second's newest record
      // stamped 1.5 s before it is read.
      meter.progress({
        records: 64 * second,
        requests: 64 * 40 * second,
        rejected: 1,
        late: 3,
        newestEventTs: now - 1500,
      });
    }
    now += 200;
    const reading = meter.reading();
    // 5 s span: from the sample at second 5 (320 records) to second 10 (640), read 5.2 s later.
    expect(reading.recordsPerSecond).toBeCloseTo(320 / 5.2, 9);
    // Requests are what the on-call view counts: 40 per record here (issue #18).
    expect(reading.requestsPerSecond).toBeCloseTo((320 * 40) / 5.2, 9);
    expect(reading.lagMs).toBe(1700);
    expect(reading.lastRecordAgeMs).toBe(200);
    expect(reading).toMatchObject({ records: 640, rejected: 1, late: 3 });
  });

  it('falls to 0 records per second when the source goes quiet, and says quiet and ended', () => {
    let now = 0;
    const meter = new SourceMeter('connecting', () => now, 5000);
    meter.progress({ records: 10, requests: 10, rejected: 0, late: 0, newestEventTs: 0 });
    now = 1000;
    meter.progress({ records: 20, requests: 20, rejected: 0, late: 0, newestEventTs: 1000 });
    meter.connection('connected');
    now = 7000;
    meter.stalled();
    expect(meter.reading()).toMatchObject({ state: 'quiet', recordsPerSecond: 0 });
    now = 8000;
    meter.progress({ records: 30, requests: 30, rejected: 0, late: 0, newestEventTs: 8000 });
    expect(meter.reading().state).toBe('connected');
    meter.end();
    expect(meter.reading().state).toBe('ended');
  });

  it('keeps a bounded number of samples at any rate', () => {
    let now = 0;
    const meter = new SourceMeter('reading', () => now, 5000);
    for (let batch = 0; batch < 100_000; batch++) {
      now += 1;
      meter.progress({ records: batch, requests: batch, rejected: 0, late: 0, newestEventTs: now });
    }
    // 100 000 batches in 100 s, merged into 250 ms samples: about 1000 a second.
    expect(meter.reading().recordsPerSecond).toBeCloseTo(1000, -1);
    const samples = (meter as unknown as { samples: unknown[] }).samples;
    expect(samples.length).toBeLessThanOrEqual(5000 / 250 + 2);
  });
});
