import { spawnSync } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

// The built CLI judges a declared universe on a second thread: its verdict stream must be
// byte for byte the one --judge-inline gives (the Judge on the reading thread, checked
// against published values in test/judge/ and test/chance/), over runs that exercise hot
// keys, a failover, weighted shares on sliding windows, a planted hotspot and a quiet gap.
// Which threads judged is read from V8's CPU profiles: node --cpu-prof writes one profile
// per thread that ran JavaScript.
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const cli = join(root, 'dist', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'shardwise-judge-thread-'));

beforeAll(() => {
  const built = spawnSync('npm', ['run', 'build'], { cwd: root, encoding: 'utf8' });
  if (built.status !== 0) throw new Error(`npm run build failed: ${built.stderr}`);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

let runs = 0;
/** stdout of `watch --no-ui --no-metrics`, and how many threads ran JavaScript. */
function watch(args: string[]): { stdout: string; threads: number } {
  const profiles = join(dir, `profiles-${runs++}`);
  const run = spawnSync(
    'node',
    ['--cpu-prof', `--cpu-prof-dir=${profiles}`, cli, 'watch', ...args, '--no-ui', '--no-metrics'],
    { encoding: 'utf8', maxBuffer: 1 << 28 },
  );
  if (run.status !== 0) throw new Error(`watch ${args.join(' ')} failed: ${run.stderr}`);
  return { stdout: run.stdout, threads: readdirSync(profiles).length };
}

function sameOnBothThreads(args: string[]): string[] {
  const threaded = watch(args);
  const inline = watch([...args, '--judge-inline']);
  expect(threaded.threads).toBe(2);
  expect(inline.threads).toBe(1);
  expect(threaded.stdout).toBe(inline.stdout);
  return threaded.stdout.split('\n').filter((line) => line !== '');
}

const fast = ['--pace', 'fast', '--start', '2026-03-01T00:00:00Z'];

describe('watch judges on a second thread', () => {
  it('gives the --judge-inline verdicts byte for byte on hot keys and a failover', () => {
    const hotKey = sameOnBothThreads(['--scenario', 'hot-key', ...fast]);
    expect(hotKey.some((line) => line.includes('"keys":{'))).toBe(true);
    const failover = sameOnBothThreads(['--scenario', 'keyed-failover', ...fast]);
    expect(failover.some((line) => line.includes('"cold"'))).toBe(true);
  });

  it('does so on weighted shares with sliding windows, and on a planted hotspot', () => {
    const weighted = sameOnBothThreads([
      '--scenario',
      'weighted',
      ...fast,
      '--window',
      '30s',
      '--hop',
      '10s',
    ]);
    expect(weighted.length).toBeGreaterThan(25);
    const hotspot = sameOnBothThreads(['--scenario', 'hotspot', ...fast, '--confirm', '2']);
    expect(hotspot.some((line) => line.includes('"opened":[{'))).toBe(true);
  });

  it('does so across a quiet gap in a file, and judges a growing universe on one thread', () => {
    const file = join(dir, 'chance.jsonl');
    const made = spawnSync(
      'node',
      [
        cli,
        'simulate',
        '--scenario',
        'chance',
        '--to',
        file,
        '--duration',
        '300s',
        '--start',
        '2026-03-01T00:00:00Z',
      ],
      { encoding: 'utf8' },
    );
    if (made.status !== 0) throw new Error(`simulate failed: ${made.stderr}`);
    // The same traffic again two days later: a gap of far more than 360 quiet windows.
    const lines = readFileSync(file, 'utf8')
      .split('\n')
      .filter((line) => line !== '');
    const later = lines.map((line) => {
      const record = JSON.parse(line) as { ts: number };
      return JSON.stringify({ ...record, ts: record.ts + 2 * 86_400_000 });
    });
    writeFileSync(file, [...lines, ...later].join('\n') + '\n');
    const verdicts = sameOnBothThreads(['--input', file, '--shards', 'seat-00..seat-63']);
    expect(verdicts.filter((line) => line.includes('"gapBefore"'))).toHaveLength(1);
    expect(verdicts.length).toBeGreaterThanOrEqual(60);
    // Without --shards the universe grows as ids arrive: its judge stays on the reading thread.
    expect(watch(['--input', file]).threads).toBe(1);
  });
});
