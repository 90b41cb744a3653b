import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { simulateCommand } from '../../src/cli/simulate.js';
import { UsageError } from '../../src/errors/usage-error.js';

// Source of truth: the record formats of docs/formats.md (JSON Lines count reports; CSV
// under the header ts,shard,count,key) and what `simulate --help` promises: per-second
// count reports of seat-00..seat-63, the same records for the same scenario, seed, start
// and duration, the plants printed on stderr. The planted hotspot is checked on the file:
// seat-17's requests over its two minutes against 1.5 times the mean of the other shards,
// within 5 standard deviations of a Poisson count (common practice).

const dir = mkdtempSync(join(tmpdir(), 'shardwise-simulate-'));
const start = Date.parse('2026-01-01T00:00:00Z');

async function simulate(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  stdout.on('data', (chunk: Buffer) => (out += chunk.toString()));
  stderr.on('data', (chunk: Buffer) => (err += chunk.toString()));
  const code = await simulateCommand.run(argv, {
    stdout,
    stderr,
    stdin: new PassThrough(),
    env: {},
  });
  return { code, out, err };
}

const base = ['--seed', '1', '--start', '2026-01-01T00:00:00Z'];

describe('shardwise simulate', () => {
  it('writes per-second count reports of the 64 seats as JSON lines, the same each run', async () => {
    const first = await simulate([
      '--scenario',
      'chance',
      '--to',
      '-',
      '--duration',
      '2s',
      ...base,
    ]);
    expect(first.code).toBe(0);
    const lines = first.out.trimEnd().split('\n');
    expect(lines).toHaveLength(128);
    const records = lines.map(
      (line) => JSON.parse(line) as { ts: number; shard: string; count: number },
    );
    expect(records.map((r) => Object.keys(r))).toEqual(lines.map(() => ['ts', 'shard', 'count']));
    expect(new Set(records.map((r) => r.ts))).toEqual(new Set([start, start + 1000]));
    const seats = Array.from({ length: 64 }, (_, i) => `seat-${String(i).padStart(2, '0')}`);
    expect(records.slice(0, 64).map((r) => r.shard)).toEqual(seats);
    for (const r of records) expect(Number.isSafeInteger(r.count) && r.count >= 0).toBe(true);
    expect(first.err).toBe(
      'shardwise simulate: 128 records of scenario chance (seed 1) from 2026-01-01T00:00:00.000Z to 2026-01-01T00:00:02.000Z, jsonl to stdout\n' +
        '  planted: nothing (pure random placement)\n',
    );
    const again = await simulate([
      '--scenario',
      'chance',
      '--to',
      '-',
      '--duration',
      '2s',
      ...base,
    ]);
    expect(again.out).toBe(first.out);
    const otherSeed = await simulate([
      '--scenario',
      'chance',
      '--to',
      '-',
      '--duration',
      '2s',
      '--seed',
      '2',
      '--start',
      '2026-01-01T00:00:00Z',
    ]);
    expect(otherSeed.out).not.toBe(first.out);
  });

  it('writes CSV to a .csv file, with the hotspot it says it planted', async () => {
    const path = join(dir, 'hotspot.csv');
    const { code, err } = await simulate(['--scenario', 'hotspot', '--to', path, ...base]);
    expect(code).toBe(0);
    expect(err).toBe(
      `shardwise simulate: 15360 records of scenario hotspot (seed 1) from 2026-01-01T00:00:00.000Z to 2026-01-01T00:04:00.000Z, csv to ${path}\n` +
        '  planted: hotspot on seat-17, 1.5x its fair share, 2026-01-01T00:01:00.000Z to 2026-01-01T00:03:00.000Z\n',
    );
    const [header, ...rows] = readFileSync(path, 'utf8').trimEnd().split('\n');
    expect(header).toBe('ts,shard,count,key');
    expect(rows).toHaveLength(15360);
    const during = (from: number, to: number) => {
      let hot = 0;
      let others = 0;
      for (const row of rows) {
        const [ts, shard, count, key] = row.split(',');
        expect(key).toBe('');
        const at = Number(ts);
        if (at < start + from || at >= start + to) continue;
        if (shard === 'seat-17') hot += Number(count);
        else others += Number(count);
      }
      return { hot, mean: others / 63 };
    };
    const planted = during(60_000, 180_000);
    expect(Math.abs(planted.hot - 1.5 * planted.mean)).toBeLessThan(
      5 * Math.sqrt(1.5 * planted.mean),
    );
    const before = during(0, 60_000);
    expect(Math.abs(before.hot - before.mean)).toBeLessThan(5 * Math.sqrt(before.mean));
  });

  it('names the option at fault', async () => {
    await expect(simulate(['--to', '-'])).rejects.toThrow(UsageError);
    await expect(simulate(['--to', '-'])).rejects.toThrow('--scenario');
    await expect(simulate(['--scenario', 'chance'])).rejects.toThrow('--to');
    await expect(simulate(['--scenario', 'nope', '--to', '-'])).rejects.toThrow('nope');
    await expect(
      simulate(['--scenario', 'chance', '--to', '-', '--format', 'xml']),
    ).rejects.toThrow('--format');
    await expect(
      simulate(['--scenario', 'chance', '--to', '-', '--topic', 'seats', '--duration', '1s']),
    ).rejects.toThrow('--topic');
    await expect(
      simulate([
        '--scenario',
        'chance',
        '--to',
        join(dir, 'missing', 'x.jsonl'),
        '--duration',
        '1s',
      ]),
    ).rejects.toThrow(/--to.*cannot be written/);
    await expect(
      simulate(['--scenario', 'chance', '--to', 'kafka', '--duration', '1s']),
    ).rejects.toThrow('--topic');
  });
});
