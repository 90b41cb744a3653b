// The first window of a large weighted universe, as a live `watch` judges it: the time from
// the window closing to its verdict (shardwise_window_judging_duration_seconds after the
// first verdict), with the judge on its own thread (warmed up while the window fills) and
// with --judge-inline (the first window judged cold, on the reading thread).
//
// A shard map of 1e5 shards with ring hash-range weights (16 tokens a shard: demo data),
// one window of 1e9 requests written to `watch --input -` as one count report per shard,
// stamped a second ago; standard input stays open, so the window closes on the quiet-time
// rule (window + lateness after the newest record) and its verdict is read from stdout.
//
// Run: npm run build && npx tsx bench/judge-thread-warm-up.bench.ts [runs, default 3]
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { setTimeout as sleep } from 'node:timers/promises';
import { RandomDraws } from '../src/scenario/random-draws.js';
import { median, summaryRow } from './summary-row.js';
import { ringWeights } from './ring-weights.js';

const runs = Number(process.argv[2] ?? 3);
if (!Number.isSafeInteger(runs) || runs < 1) throw new Error('usage: [runs >= 1]');
const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const cli = join(root, 'dist', 'cli', 'main.js');
if (!existsSync(cli)) throw new Error('no dist/cli/main.js: run `npm run build` first');

const m = 100_000;
const total = 1e9;
const dir = mkdtempSync(join(tmpdir(), 'shardwise-warm-up-'));
const weights = ringWeights(m, 4);
let weightSum = 0;
for (let shard = 0; shard < m; shard++) weightSum += weights[shard];
const map = join(dir, 'ring.csv');
writeFileSync(
  map,
  'shard,weight\n' +
    Array.from(weights, (weight, shard) => `r-${shard},${weight}`).join('\n') +
    '\n',
);

/** Seconds from the first window's close to its verdict, and from start to the verdict. */
async function firstWindow(inline: boolean): Promise<{ judging: number; wall: number }> {
  const started = performance.now();
  const args = [
    cli,
    'watch',
    '--input',
    '-',
    '--shard-map',
    map,
    '--window',
    '10s',
    '--lateness',
    '1s',
  ];
  args.push('--metrics-port', '0', '--no-ui', '--no-keys', ...(inline ? ['--judge-inline'] : []));
  const watch = spawn(process.execPath, args, { stdio: ['pipe', 'pipe', 'pipe'] });
  let stderr = '';
  let verdicts = 0;
  watch.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  watch.stdout.on('data', (chunk: Buffer) => {
    for (const byte of chunk) if (byte === 10) verdicts++;
  });
  try {
    let url: string | undefined;
    while (url === undefined) {
      url = /metrics at (http:\/\/\S+\/metrics)/.exec(stderr)?.[1];
      if (watch.exitCode !== null) throw new Error(`watch ended:\n${stderr}`);
      await sleep(20);
    }
    const draws = new RandomDraws(5);
    const ts = Date.now() - 1000;
    const lines: string[] = [];
    for (let shard = 0; shard < m; shard++) {
      const count = draws.poisson((total * weights[shard]) / weightSum);
      lines.push(`{"ts":${ts},"shard":"r-${shard}","count":${count}}`);
    }
    watch.stdin.write(lines.join('\n') + '\n');
    while (verdicts === 0) {
      if (watch.exitCode !== null) throw new Error(`watch ended:\n${stderr}`);
      if (performance.now() - started > 120_000) throw new Error('no verdict in 120 s');
      await sleep(5);
    }
    const wall = (performance.now() - started) / 1000;
    const text = await (await globalThis.fetch(url)).text();
    const sum = /^shardwise_window_judging_duration_seconds_sum(?:\{[^}]*\})? (\S+)$/m.exec(text);
    if (sum === null) throw new Error('no judging-duration histogram on /metrics');
    return { judging: Number(sum[1]), wall };
  } finally {
    watch.stdin.end();
    watch.kill('SIGTERM');
    if (watch.exitCode === null) await new Promise((resolve) => watch.once('exit', resolve));
  }
}

try {
  const threaded: number[] = [];
  const inline: number[] = [];
  for (let run = 0; run < runs; run++) {
    for (const mode of ['thread', 'inline'] as const) {
      const result = await firstWindow(mode === 'inline');
      (mode === 'inline' ? inline : threaded).push(result.judging * 1000);
      console.log(
        `run ${run + 1} ${mode.padEnd(6)} first window close to verdict ${(result.judging * 1000).toFixed(0)} ms ` +
          `(verdict ${result.wall.toFixed(1)} s after start)`,
      );
    }
  }
  const range = (values: number[]) =>
    `${median(values).toFixed(0)} ms (${Math.min(...values).toFixed(0)}-${Math.max(...values).toFixed(0)})`;
  console.log(
    `\nweighted 1e5 shards, N = 1e9, first window of a live watch: judging thread ${range(threaded)}, ` +
      `--judge-inline ${range(inline)}`,
  );
  summaryRow(
    'weighted m = 1e5, N = 1e9: first window of a live watch, close to verdict',
    `${median(threaded).toFixed(0)} ms (--judge-inline: ${median(inline).toFixed(0)} ms)`,
    '< 200 ms',
  );
} finally {
  rmSync(dir, { recursive: true, force: true });
}
