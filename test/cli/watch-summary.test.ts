import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import type { CommandIO } from '../../src/cli/command.js';
import { emptyRunVerdict, summary } from '../../src/cli/watch-summary.js';
import type { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import type { RejectionReason } from '../../src/window/count-record.js';
import type { WindowTotals } from '../../src/window/event-time-window.js';

// Source of truth: the wording and exit codes documented in src/cli/watch-summary.ts (an
// empty input exits 0, an input whose every record was rejected exits 1); the figures are
// literals of our own, the expected lines written out by hand.

const zero: WindowTotals = {
  records: 0,
  load: 0,
  late: 0,
  lateRecords: 0,
  rejected: {},
  windowsClosed: 0,
  quietWindowsSkipped: 0,
  gaps: [],
  gapCount: 0,
  lateByPartition: new Map(),
  outOfOrderByPartition: new Map(),
};

/** Only what watch-summary reads of a pipeline: its totals and open windows. */
function fakePipeline(
  totals: Partial<WindowTotals> & { recordsSeen?: number },
  openWindows = 0,
): JudgingPipeline {
  return {
    totals: { ...zero, recordsSeen: 0, ...totals },
    openWindows,
  } as unknown as JudgingPipeline;
}

function fakeIO(): { io: CommandIO; stderr: () => string } {
  const err = new PassThrough();
  let text = '';
  err.on('data', (chunk: Buffer) => (text += chunk.toString()));
  const io: CommandIO = {
    stdout: new PassThrough(),
    stderr: err,
    stdin: new PassThrough(),
    env: {},
  };
  return { io, stderr: () => text };
}

describe('emptyRunVerdict', () => {
  it('exits 0 and says so when the input held no records', () => {
    const { io, stderr } = fakeIO();
    expect(emptyRunVerdict(fakePipeline({}), false, io)).toBe(0);
    expect(stderr()).toBe('shardwise watch: the input held no records, nothing was judged\n');
  });

  it('exits 1 when every record was rejected', () => {
    const { io, stderr } = fakeIO();
    expect(emptyRunVerdict(fakePipeline({ rejected: { 'not JSON': 3 } }), false, io)).toBe(1);
    expect(stderr()).toBe(
      'shardwise watch: every record was rejected, nothing was judged (reasons and first lines above)\n',
    );
  });

  it('says nothing when records were counted or the run is quiet', () => {
    const { io, stderr } = fakeIO();
    expect(
      emptyRunVerdict(fakePipeline({ records: 1, rejected: { 'not JSON': 3 } }), false, io),
    ).toBe(0);
    expect(emptyRunVerdict(fakePipeline({ rejected: { 'not JSON': 3 } }), true, io)).toBe(0);
    expect(stderr()).toBe('');
  });
});

describe('summary', () => {
  const noIncidents = { opened: [], cleared: 0, openAtEnd: [] };

  it('counts in the singular and plural and lists nothing absent', () => {
    const text = summary(
      1,
      fakePipeline({ records: 1, recordsSeen: 1, load: 1 }),
      noIncidents,
      false,
      0,
      new Map(),
    );
    expect(text).toBe(
      'shardwise watch: 1 window judged, 1 record read, 1 request counted\n' +
        '  rejected: 0; late: 0 requests in 0 records\n' +
        '  incidents: 0 opened, 0 cleared, 0 open at the end\n',
    );
  });

  it('lists rejections in report order with their first lines, late by partition, incidents, gaps, retirements and the interrupt', () => {
    const firstRejected = new Map<RejectionReason, number>([
      ['too late', 9],
      ['not JSON', 2],
    ]);
    const text = summary(
      12,
      fakePipeline(
        {
          records: 40,
          recordsSeen: 47,
          load: 900,
          late: 6,
          lateRecords: 2,
          rejected: { 'too late': 2, 'not JSON': 5 },
          quietWindowsSkipped: 30,
          gaps: [{ start: 0, end: 300_000, windows: 30 }],
          gapCount: 3,
          lateByPartition: new Map([
            [2, 1],
            [0, 1],
          ]),
          outOfOrderByPartition: new Map([[2, 1]]),
        },
        2,
      ),
      {
        opened: [
          {
            shard: 'db-7\u001b[2J',
            finding: 'hotspot',
            since: '2026-01-01T00:00:10.000Z',
            windows: 3,
            test: 'window',
          },
        ],
        cleared: 0,
        openAtEnd: [],
      },
      true,
      4,
      firstRejected,
    );
    expect(text.split('\n')).toEqual([
      'shardwise watch: 12 windows judged, 47 records read, 900 requests counted',
      '  rejected: 7 (not JSON 5, first on line 2; too late 2, first on line 9); late: 6 requests in 2 records',
      '  too late by source partition: 0: 1, 2: 1',
      '    of them out of time order within their own partition (older than records it had already given; --lateness covers disorder up to its length): 2: 1',
      '  incidents: 1 opened, 0 cleared, 0 open at the end',
      '    hotspot on db-7\\x1b[2J since 2026-01-01T00:00:10.000Z',
      '  gaps without records, skipped and not judged: 3 (30 windows)',
      '    1970-01-01T00:00:00.000Z to 1970-01-01T00:05:00.000Z (5 min)',
      '    and 2 more',
      '  shards retired: 4 (ids that stopped reporting left m)',
      '  interrupted: 2 partial windows not judged',
      '',
    ]);
  });

  it('joins rejections without first lines by commas and leaves out partition 0 alone', () => {
    const text = summary(
      2,
      fakePipeline({
        rejected: { 'wrong type': 1, 'negative count': 2 },
        lateByPartition: new Map([[0, 4]]),
      }),
      noIncidents,
      true,
      0,
      new Map(),
    );
    expect(text.split('\n')[1]).toBe(
      '  rejected: 3 (wrong type 1, negative count 2); late: 0 requests in 0 records',
    );
    expect(text).not.toContain('by source partition');
    expect(text).not.toContain('interrupted');
  });
});
