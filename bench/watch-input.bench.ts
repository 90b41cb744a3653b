// `watch --input` end to end, judging included: the built CLI reads a file of count
// reports from the `chance` scenario (64 shards, one report per shard per second: 1e6
// records make 1563 windows of 10 s) with --no-ui, writing its line per window to a pipe
// that is drained. Wall time of the whole process (start-up included) and records/s.
// Run: npm run build && npx tsx bench/watch-input.bench.ts [records, default 1000000] [runs, default 3]
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { median, summaryRow } from './summary-row.js';

const records = Number(process.argv[2] ?? 1_000_000);
const runs = Number(process.argv[3] ?? 3);
if (!Number.isSafeInteger(records) || records < 64 || !Number.isSafeInteger(runs) || runs < 1) {
  throw new Error('usage: watch-input.bench.ts [records >= 64] [runs >= 1]');
}
const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const cli = join(root, 'dist', 'cli', 'main.js');
if (!existsSync(cli)) throw new Error('no dist/cli/main.js: run `npm run build` first');

const dir = mkdtempSync(join(tmpdir(), 'shardwise-watch-input-'));
try {
  const file = join(dir, 'chance.jsonl');
  const seconds = Math.ceil(records / 64);
  const made = spawnSync(
    process.execPath,
    [
      cli,
      'simulate',
      '--scenario',
      'chance',
      '--to',
      file,
      '--duration',
      `${seconds}s`,
      '--start',
      '2026-01-01T00:00:00Z',
    ],
    { encoding: 'utf8' },
  );
  if (made.status !== 0) throw new Error(`simulate failed: ${made.stderr}`);
  const times: number[] = [];
  let windows = 0;
  for (let run = 0; run < runs; run++) {
    const started = performance.now();
    const watch = spawnSync(
      process.execPath,
      [cli, 'watch', '--input', file, '--shards', 'seat-00..seat-63', '--no-ui'],
      { encoding: 'utf8', maxBuffer: 1 << 30 },
    );
    const elapsed = (performance.now() - started) / 1000;
    if (watch.status !== 0) throw new Error(`watch failed: ${watch.stderr}`);
    windows = watch.stdout.split('\n').filter((line) => line.length > 0).length;
    times.push(elapsed);
    console.log(
      `run ${run + 1}: ${elapsed.toFixed(2)} s, ${((seconds * 64) / elapsed / 1000).toFixed(0)} k records/s, ${windows} windows`,
    );
  }
  const typical = median(times);
  const rate = (seconds * 64) / typical;
  console.log(
    `\nwatch --input, ${seconds * 64} count reports on 64 shards, ${windows} windows judged: ` +
      `median ${typical.toFixed(2)} s wall, ${(rate / 1000).toFixed(0)} k records/s`,
  );
  summaryRow(
    'watch --input, judging included',
    `${(rate / 1000).toFixed(0)} k records/s`,
    '>= 500 k records/s',
  );
} finally {
  rmSync(dir, { recursive: true, force: true });
}
