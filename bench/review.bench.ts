// shardwise review of a day: a recording of 24 hours of 10 s windows at m = 1024 (8640
// windows, about 200 requests per shard per window, seat-0017 planted at 1.5x its fair share
// for an hour) reviewed by the built CLI in a child process: wall time and peak RSS (GNU
// time's maximum resident set size). Target: under 30 s. The recording is made first
// (untimed) by the real Judge and WindowRecorder from multinomial counts. Needs `npm run
// build` (the child runs dist/).
// Run: npx tsx bench/review.bench.ts [recording path, default $TMPDIR/shardwise-day.jsonl]
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Judge } from '../src/judge/judge.js';
import { defaultJudgeSettings } from '../src/judge/judge-settings.js';
import { WindowRecorder } from '../src/record/window-recorder.js';
import { ShardUniverse } from '../src/window/shard-universe.js';
import { MultinomialDraws } from './multinomial-draws.js';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const cli = join(root, 'dist', 'cli', 'main.js');
const recording = process.argv[2] ?? join(tmpdir(), 'shardwise-day.jsonl');
const shards = 1024;
const windowMs = 10_000;
const windows = 8640;
const perShard = 200;
const startMs = Date.parse('2025-12-01T00:00:00Z');

function makeRecording(): number {
  const began = performance.now();
  const ids = Array.from({ length: shards }, (_, at) => `seat-${String(at).padStart(4, '0')}`);
  const universe = ShardUniverse.fromIds(ids);
  const settings = { ...defaultJudgeSettings, hopMs: windowMs };
  const judge = new Judge(universe, settings);
  const recorder = new WindowRecorder({
    path: recording,
    settings: {
      source: { bench: 'review.bench.ts' },
      windowMs,
      latenessMs: 2000,
      declaredUniverse: true,
      ...settings,
    },
  });
  const draws = new MultinomialDraws(7);
  const hotShares = new Float64Array(shards).fill(1);
  hotShares[17] = 1.5;
  const sum = hotShares.reduce((a, b) => a + b, 0);
  for (let at = 0; at < shards; at++) hotShares[at] /= sum;
  const counts = new Float64Array(shards);
  for (let w = 0; w < windows; w++) {
    const start = startMs + w * windowMs;
    // Diurnal traffic between 0.5x and 1.5x; the hotspot from 14:00 to 15:00.
    const rate = 1 + 0.5 * Math.sin((2 * Math.PI * w) / windows);
    const hot = w >= 5040 && w < 5400;
    draws.draw(Math.round(shards * perShard * rate), hot ? hotShares : null, counts);
    let total = 0;
    for (let at = 0; at < shards; at++) total += counts[at];
    const window = { start, end: start + windowMs, counts, total, late: 0, rejected: {} };
    recorder.record(window, judge.judge(window), universe);
  }
  recorder.close();
  return (performance.now() - began) / 1000;
}

function timed(args: string[]): { seconds: number; peakMiB: number; status: number | null } {
  const run = spawnSync('/usr/bin/time', ['-f', '%e %M', process.execPath, cli, ...args], {
    encoding: 'utf8',
  });
  const last = run.stderr.trim().split('\n').pop() ?? '';
  const [seconds, kib] = last.split(' ').map(Number);
  if (run.status !== 0) throw new Error(`review failed: ${run.stderr}`);
  return { seconds, peakMiB: kib / 1024, status: run.status };
}

if (!existsSync(cli)) throw new Error('run npm run build first: the bench runs dist/cli/main.js');
if (!existsSync(recording)) {
  console.log(`making ${recording}: ${windows} windows of ${shards} shards ...`);
  console.log(`  made in ${makeRecording().toFixed(1)} s`);
}
const out = mkdtempSync(join(tmpdir(), 'shardwise-review-bench-'));
console.log(`recording: ${recording}, ${(statSync(recording).size / 2 ** 20).toFixed(1)} MiB`);
const cases: [string, string[]][] = [
  ['as recorded, HTML + Markdown', ['--out', join(out, 'a.html'), '--markdown', join(out, 'a.md')]],
  [
    'judged again (--alpha 0.0001), HTML + Markdown',
    ['--alpha', '0.0001', '--out', join(out, 'b.html'), '--markdown', join(out, 'b.md')],
  ],
  ['re-windowed (--window 1m), HTML', ['--window', '1m', '--out', join(out, 'c.html')]],
];
console.log('| review | wall s | peak RSS MiB |');
console.log('| --- | --- | --- |');
for (const [name, args] of cases) {
  const { seconds, peakMiB } = timed(['review', '--recording', recording, ...args]);
  console.log(`| ${name} | ${seconds.toFixed(1)} | ${peakMiB.toFixed(0)} |`);
}
console.log(`HTML report: ${(statSync(join(out, 'a.html')).size / 1024).toFixed(0)} KiB`);
