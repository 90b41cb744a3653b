import fc from 'fast-check';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { afterAll, describe, expect, it } from 'vitest';
import { FileSource, type SourceItem } from '../../src/ingest/file-source.js';
import { isRejection, type RejectionReason } from '../../src/window/count-record.js';
import { UsageError } from '../../src/errors/usage-error.js';
import { EventTimeWindows, type ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

const directory = mkdtempSync(join(tmpdir(), 'shardwise-file-source-'));
afterAll(() => rmSync(directory, { recursive: true, force: true }));

let fileCount = 0;
function file(name: string, content: string): string {
  const path = join(directory, `${fileCount++}-${name}`);
  writeFileSync(path, content);
  return path;
}

async function items(source: FileSource): Promise<SourceItem[]> {
  const out: SourceItem[] = [];
  for await (const item of source) out.push(item);
  return out;
}

const ts = 1_764_583_200_000;

describe('FileSource, bytes that are not UTF-8', () => {
  // Unicode's well-formed UTF-8 sequences: FF and FE occur in none. A WHATWG decoder turns
  // both into U+FFFD, which would merge `a\xff` and `a\xfe` into one shard `a\uFFFD`.
  const enc = (text: string): number[] => [...Buffer.from(text, 'utf8')];
  const jsonLines = Buffer.from([
    ...enc(`{"ts":${ts},"shard":"a`),
    0xff,
    ...enc('","count":1}\n'),
    ...enc(`{"ts":${ts},"shard":"a`),
    0xfe,
    ...enc('","count":2}\n'),
    ...enc(`{"ts":${ts},"counts":{"b":3,"a`),
    0xff,
    ...enc('":4,"a'),
    0xfe,
    ...enc('":5}}\n'),
    ...enc(`{"ts":${ts},"shard":"c","key":"k`),
    0xc0,
    0xaf,
    ...enc('"}\n'),
    ...enc(`{"ts":${ts},"shard":"a\uFFFD","count":6}\n`),
  ]);
  const expected = [
    { reason: 'invalid UTF-8', line: 1 },
    { reason: 'invalid UTF-8', line: 2 },
    { ts, shard: 'b', count: 3 },
    { reason: 'invalid UTF-8', line: 3 },
    { reason: 'invalid UTF-8', line: 3 },
    { reason: 'invalid UTF-8', line: 4 },
    { ts, shard: 'a\uFFFD', count: 6 },
  ];

  it('rejects each JSON Lines id or key with invalid bytes, keeping the rest of a batch', async () => {
    const path = join(directory, `${fileCount++}-bytes.jsonl`);
    writeFileSync(path, jsonLines);
    expect(await items(new FileSource(path))).toEqual(expected);
  });

  it('does the same on standard input, with the bytes split across chunks', async () => {
    const cut = jsonLines.indexOf(0xfe);
    const stream = Readable.from([jsonLines.subarray(0, cut), jsonLines.subarray(cut)]);
    expect(await items(new FileSource('-', { stream }))).toEqual(expected);
  });

  it('rejects CSV ids and keys with invalid bytes', async () => {
    const content = Buffer.from([
      ...enc(`ts,shard,count,key\n${ts},a`),
      0xff,
      ...enc(',1,\n'),
      ...enc(`${ts},a`),
      0xfe,
      ...enc(',1,\n'),
      ...enc(`${ts},b,1,k`),
      0xed,
      0xa0,
      0x80,
      ...enc('\n'),
      ...enc(`${ts},a\uFFFD,2,\n`),
    ]);
    const path = join(directory, `${fileCount++}-bytes.csv`);
    writeFileSync(path, content);
    expect(await items(new FileSource(path))).toEqual([
      { reason: 'invalid UTF-8', line: 2 },
      { reason: 'invalid UTF-8', line: 3 },
      { reason: 'invalid UTF-8', line: 4 },
      { ts, shard: 'a\uFFFD', count: 2 },
    ]);
  });
});

describe('FileSource', () => {
  it('yields records and numbered rejections from JSON Lines, skipping blank lines', async () => {
    const path = file(
      'mixed.jsonl',
      [
        `{"ts":${ts},"shard":"s-1","count":3}`,
        '',
        'garbage',
        `{"ts":${ts},"counts":{"s-2":1,"s-3":-1}}`,
        `{"ts":"2025-12-01T10:00:01Z","shard":"s-4","key":"k"}\r`,
        '   ',
        `{"ts":${ts},"shard":"s-5","count":1}`,
      ].join('\n'),
    );
    expect(await items(new FileSource(path))).toEqual([
      { ts, shard: 's-1', count: 3 },
      { reason: 'not JSON', line: 3 },
      { ts, shard: 's-2', count: 1 },
      { reason: 'negative count', line: 4 },
      { ts: ts + 1000, shard: 's-4', count: 1, key: 'k' },
      { ts, shard: 's-5', count: 1 },
    ]);
  });

  it('reads CSV by extension, or by its header when the name says nothing', async () => {
    const content = `ts,shard,count\n${ts},s-1,2\n${ts},s-2,x\n`;
    const expected = [
      { ts, shard: 's-1', count: 2 },
      { reason: 'wrong type', line: 3 },
    ];
    const byExtension = new FileSource(file('r.csv', content));
    expect(await items(byExtension)).toEqual(expected);
    expect(byExtension.format).toBe('csv');
    const byHeader = new FileSource('-', { stream: Readable.from([Buffer.from(content)]) });
    expect(await items(byHeader)).toEqual(expected);
    expect(byHeader.format).toBe('csv');
  });

  it('reads JSON Lines from an unnamed stream whose first line is an object', async () => {
    const source = new FileSource('-', {
      stream: Readable.from([`{"ts":${ts},"shard":"a","count":1}\n`]),
    });
    expect(await items(source)).toEqual([{ ts, shard: 'a', count: 1 }]);
    expect(source.format).toBe('jsonl');
  });

  it('refuses a CSV file without a header, naming --input and the file', async () => {
    const path = file('nohead.csv', `${ts},s-1,2\n`);
    const failure = items(new FileSource(path));
    await expect(failure).rejects.toBeInstanceOf(UsageError);
    await expect(items(new FileSource(path))).rejects.toThrow(
      `--input: ${JSON.stringify(path)} is CSV but its first line`,
    );
  });

  it('names the input in a read error', async () => {
    const missing = join(directory, 'no-such-file.jsonl');
    await expect(items(new FileSource(missing))).rejects.toThrow(
      `--input ${JSON.stringify(missing)}: ENOENT`,
    );
  });

  it('gives the same answers item by item, by batches and into a sink', async () => {
    const lines = [];
    for (let index = 0; index < 5000; index++) {
      lines.push(
        index % 97 === 0
          ? '{bad'
          : `{"ts":${ts + index},"shard":"s-${index % 7}","count":${index % 5}}`,
      );
    }
    const path = file('many.jsonl', lines.join('\n'));
    const one = await items(new FileSource(path));
    const batched: SourceItem[] = [];
    for await (const batch of new FileSource(path).batches()) batched.push(...batch);
    const sunk: unknown[] = [];
    await new FileSource(path).decodeInto({
      record: (time, shard, count) => sunk.push({ ts: time, shard, count }),
      reject: (reason) => sunk.push({ reason }),
    });
    expect(batched).toEqual(one);
    expect(sunk).toEqual(one.map((item) => (isRejection(item) ? { reason: item.reason } : item)));
    // 0, 97, ..., 4947: 52 bad lines of 5000.
    expect(one.filter(isRejection)).toHaveLength(52);
  });

  it('stops when closed', async () => {
    const lines = Array.from(
      { length: 300_000 },
      (_, index) => `{"ts":${ts + index},"shard":"a","count":1}`,
    );
    const source = new FileSource(file('long.jsonl', lines.join('\n')));
    let seen = 0;
    for await (const item of source) {
      expect(isRejection(item)).toBe(false);
      if (++seen === 10) await source.close();
    }
    // Reading ends after the buffer in hand: far fewer than all 300000 records.
    expect(seen).toBeLessThan(300_000);
    expect(seen).toBeGreaterThanOrEqual(10);
  });

  it('rejects "too many shards" past --max-shards of a growing universe', async () => {
    const path = file(
      'ids.jsonl',
      ['a', 'b', 'c', 'a'].map((id) => `{"ts":${ts},"shard":"${id}","count":1}`).join('\n'),
    );
    const closed: ClosedWindow[] = [];
    const windows = new EventTimeWindows(
      ShardUniverse.growing({ maxShards: 2 }),
      { windowMs: 10_000 },
      (window) => closed.push(window),
    );
    for await (const item of new FileSource(path)) {
      if (isRejection(item)) windows.reject(item.reason);
      else windows.addRecord(item);
    }
    windows.closeAll();
    expect([...closed[0].counts]).toEqual([2, 1]);
    expect(closed[0].rejected).toEqual({ 'too many shards': 1 });
  });
});

describe('100000 fuzzed lines through decoding and windows', () => {
  interface Planned {
    /** The line for a timestamp. */
    make(time: number): string;
    /** Records the line should decode to. */
    good: { shard: string; count: number }[];
    /** Rejections decoding should make. */
    bad: RejectionReason[];
  }

  const inside = ['s-0', 's-1', 's-2', 's-3'];
  const shard = fc.oneof(
    { weight: 9, arbitrary: fc.constantFrom(...inside) },
    { weight: 1, arbitrary: fc.constantFrom('s-9', 'other') },
  );
  const count = fc.nat({ max: 1000 });
  const iso = (time: number) => new Date(time).toISOString();
  const planned: fc.Arbitrary<Planned> = fc.oneof(
    fc.tuple(shard, count).map(([id, n]) => ({
      make: (t: number) => `{"ts":${t},"shard":"${id}","count":${n}}`,
      good: [{ shard: id, count: n }],
      bad: [],
    })),
    fc.tuple(shard, count).map(([id, n]) => ({
      make: (t: number) => `{ "count": ${n}, "shard": "${id}", "ts": "${iso(t)}" }`,
      good: [{ shard: id, count: n }],
      bad: [],
    })),
    fc.tuple(shard, fc.string({ maxLength: 8 })).map(([id, key]) => ({
      make: (t: number) => JSON.stringify({ ts: t, shard: id, key }),
      good: [{ shard: id, count: 1 }],
      bad: [],
    })),
    fc
      .tuple(
        fc.uniqueArray(fc.tuple(fc.constantFrom(...inside, 'other'), count), {
          selector: ([id]) => id,
          maxLength: 5,
        }),
        fc.subarray([
          'negative count',
          'non-integer count',
          'wrong type',
          'missing shard',
        ] as RejectionReason[]),
      )
      .map(([entries, problems]) => {
        const values: Record<string, unknown> = Object.fromEntries(entries);
        const badValues: Record<string, [string, unknown]> = {
          'negative count': ['neg', -3],
          'non-integer count': ['frac', 0.5],
          'wrong type': ['str', '9'],
          'missing shard': ['', 4],
        };
        for (const problem of problems) values[badValues[problem][0]] = badValues[problem][1];
        return {
          make: (t: number) => JSON.stringify({ ts: t, counts: values }),
          good: entries.map(([id, n]) => ({ shard: id, count: n })),
          bad: problems,
        };
      }),
    fc.tuple(shard, count).map(([id, n]) => ({
      make: (t: number) => `{"ts":${t},"shard":"${id}","count":${n}`,
      good: [],
      bad: ['not JSON' as const],
    })),
    fc.constantFrom<Planned>(
      { make: (t) => `[${t},"s-0",1]`, good: [], bad: ['wrong type'] },
      { make: (t) => `{"ts":${t},"shard":"s-0","count":"1"}`, good: [], bad: ['wrong type'] },
      { make: (t) => `{"ts":${t},"shard":"s-0","count":-7}`, good: [], bad: ['negative count'] },
      {
        make: (t) => `{"ts":${t},"shard":"s-0","count":2.25}`,
        good: [],
        bad: ['non-integer count'],
      },
      { make: (t) => `{"ts":${t},"count":2}`, good: [], bad: ['missing shard'] },
      {
        make: (t) => `{"ts":"${iso(t).slice(0, -1)}","shard":"s-0","count":2}`,
        good: [],
        bad: ['bad timestamp'],
      },
      {
        make: (t) => `{"ts":${t},"shard":"${'q'.repeat(201)}","count":2}`,
        good: [],
        bad: ['shard id too long'],
      },
      { make: () => '', good: [], bad: [] },
    ),
  );

  it('counts every good and bad record exactly, with no crash', async () => {
    const lineCount = 100_000;
    const plans = fc.sample(planned, { numRuns: lineCount, seed: 31337 });
    const jitters = fc.sample(fc.integer({ min: -8000, max: 2000 }), {
      numRuns: lineCount,
      seed: 4,
    });
    const windowMs = 10_000;
    const latenessMs = 3000;
    const lines: string[] = [];
    const expectedRejections = new Map<RejectionReason, number>();
    const bump = (reason: RejectionReason) =>
      expectedRejections.set(reason, (expectedRejections.get(reason) ?? 0) + 1);
    let newest = Number.NEGATIVE_INFINITY;
    let expectedLoad = 0;
    let expectedRecords = 0;
    let expectedLate = 0;
    plans.forEach((plan, index) => {
      // Mostly forward in time, 5 ms a line, with jitter back up to 8 s: a steady share of late records.
      const time = ts + index * 5 + jitters[index];
      lines.push(plan.make(time));
      plan.bad.forEach(bump);
      // The watermark model of docs/model.md: newest admitted timestamp minus the lateness.
      for (const record of plan.good) {
        if (!inside.includes(record.shard)) {
          bump('outside universe');
          continue;
        }
        newest = Math.max(newest, time);
        const end = Math.floor(time / windowMs) * windowMs + windowMs;
        if (end <= newest - latenessMs) {
          bump('too late');
          expectedLate += record.count;
        } else {
          expectedRecords++;
          expectedLoad += record.count;
        }
      }
    });
    lines.splice(5000, 0, `{"ts":${ts},"pad":"${'x'.repeat(1 << 20)}"}`);
    lines.splice(70_000, 0, 'y'.repeat((1 << 20) + 1));
    bump('line too long');
    bump('line too long');
    const path = file('fuzz.jsonl', lines.join('\n'));

    for (const mode of ['items', 'sink'] as const) {
      const closed: ClosedWindow[] = [];
      const windows = new EventTimeWindows(
        ShardUniverse.fromIds(inside),
        { windowMs, latenessMs },
        (window) => closed.push(window),
      );
      const source = new FileSource(path);
      if (mode === 'items') {
        for await (const item of source) {
          if (isRejection(item)) windows.reject(item.reason);
          else windows.addRecord(item);
        }
      } else {
        await source.decodeInto({
          record: (time, id, n) => windows.add(time, id, n),
          reject: (reason) => windows.reject(reason),
        });
      }
      windows.closeAll();
      const totals = windows.totals;
      expect(totals.rejected).toEqual(Object.fromEntries(expectedRejections));
      expect(totals.records).toBe(expectedRecords);
      expect(totals.load).toBe(expectedLoad);
      expect(totals.late).toBe(expectedLate);
      expect(closed.reduce((sum, window) => sum + window.total, 0)).toBe(expectedLoad);
      // Every reason of docs/formats.md reachable from a file shows up (all but "too many shards", tested above).
      expect(Object.keys(totals.rejected).sort()).toEqual(
        [
          'not JSON',
          'wrong type',
          'negative count',
          'non-integer count',
          'missing shard',
          'shard id too long',
          'outside universe',
          'bad timestamp',
          'too late',
          'line too long',
        ].sort(),
      );
    }
  });
});
