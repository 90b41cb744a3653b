/**
 * Speed of one full window summary (fullest and emptiest p-values, chance ceiling and floor,
 * empty-shard test, spread) at the sizes of the README's speed targets: equal shares m = 1e5, N = 1e9
 * (target < 10 ms) and weighted shares m = 1e5 (target < 50 ms).
 * The weighted one also cold: the first window in a fresh process (5 processes).
 * Then the weighted summary at m = 1e5 across share spreads and totals (N = 1e6 to 1e9),
 * and the empty-shard test at m = 1024 with 10 to 20 requests a shard (every window a new
 * total, as live traffic gives).
 * Run: npx tsx bench/chance.bench.ts   (not part of npm test)
 */
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { emptyShardsTail } from '../src/chance/empty-shards.js';
import { makePlacement } from '../src/chance/placement.js';
import { summarizeWindow } from '../src/chance/window-summary.js';
import { RandomDraws } from '../src/scenario/random-draws.js';
import { ringWeights } from './ring-weights.js';

function measure(
  name: string,
  build: () => { placement: ReturnType<typeof makePlacement>; counts: Float64Array },
  runs: number,
): void {
  const { placement, counts } = build();
  for (let i = 0; i < 5; i++) summarizeWindow(placement, counts, 0.001);
  const times: number[] = [];
  for (let i = 0; i < runs; i++) {
    const t = performance.now();
    summarizeWindow(placement, counts, 0.001);
    times.push(performance.now() - t);
  }
  times.sort((a, b) => a - b);
  const median = times[Math.floor(times.length / 2)];
  const p90 = times[Math.floor(times.length * 0.9)];
  console.log(`| ${name} | ${runs} | ${median.toFixed(2)} | ${p90.toFixed(2)} |`);
}

function windowOf(m: number, n: number, weights: Float64Array | null, seed: number) {
  const draws = new RandomDraws(seed);
  const counts = new Float64Array(m);
  let sumW = 0;
  if (weights) for (const w of weights) sumW += w;
  let total = 0;
  for (let i = 0; i < m; i++) {
    counts[i] = draws.poisson(weights ? (n * weights[i]) / sumW : n / m);
    total += counts[i];
  }
  return { placement: makePlacement(total, m, weights ?? undefined), counts };
}

// `--cold`: in a fresh process, the first weighted summary at m = 1e5, N = 1e9 (tables,
// share classes and JIT all cold, as in the first window of a `watch`), then the next one.
if (process.argv[2] === '--cold') {
  const { placement, counts } = windowOf(1e5, 1e9, ringWeights(1e5, 4), 5);
  let t = performance.now();
  summarizeWindow(placement, counts, 0.001);
  const first = performance.now() - t;
  t = performance.now();
  summarizeWindow(placement, counts, 0.001);
  console.log(`${first.toFixed(0)} ${(performance.now() - t).toFixed(0)}`);
  process.exit(0);
}

console.log('| window summary | runs | median ms | p90 ms |');
console.log('| --- | --- | --- | --- |');
measure('equal shares, m = 1e5, N = 1e9', () => windowOf(1e5, 1e9, null, 1), 50);
measure('equal shares, m = 1e4, N = 1e6', () => windowOf(1e4, 1e6, null, 2), 50);
measure('equal shares, m = 64, N = 1e5', () => windowOf(64, 1e5, null, 3), 50);
measure(
  'weighted shares (16 tokens per shard), m = 1024, N = 1e7',
  () => windowOf(1024, 1e7, ringWeights(1024, 4), 5),
  10,
);
measure(
  'weighted shares (16 tokens per shard), m = 1e5, N = 1e9',
  () => windowOf(1e5, 1e9, ringWeights(1e5, 4), 5),
  20,
);
{
  const firsts: number[] = [];
  const seconds: number[] = [];
  for (let i = 0; i < 5; i++) {
    const child = spawnSync(
      process.execPath,
      [...process.execArgv, fileURLToPath(import.meta.url), '--cold'],
      { encoding: 'utf8' },
    );
    const [first, second] = child.stdout.trim().split(' ').map(Number);
    firsts.push(first);
    seconds.push(second);
  }
  console.log(
    `| weighted shares (16 tokens per shard), m = 1e5, N = 1e9, first window of a process (5 processes) | 5 | ${firsts.sort((a, b) => a - b)[2]} (${Math.min(...firsts)}-${Math.max(...firsts)}; second window ${seconds.sort((a, b) => a - b)[2]}) | |`,
  );
}

// Weighted universes of 1e5 shards across share spreads and totals: ring hash ranges with
// 16, 4 and 1 tokens per shard (coefficient of variation 1/4, 1/2 and 1: exponential
// shares), and shares uniform on [0.5, 1.5]. Demo data; 7 runs each after 3 warm-ups.
function spreadWeights(m: number, spread: string, seed: number): Float64Array {
  if (spread !== 'uniform') return ringWeights(m, seed, Number(spread));
  const draws = new RandomDraws(seed);
  return Float64Array.from({ length: m }, () => 0.5 + draws.uniform());
}
console.log('');
console.log('| weighted, m = 1e5 | N = 1e6 | N = 1e7 | N = 1e8 | N = 1e9 |');
console.log('| --- | --- | --- | --- | --- |');
for (const spread of ['uniform', '16', '4', '1']) {
  const cells: string[] = [];
  for (const n of [1e6, 1e7, 1e8, 1e9]) {
    const { placement, counts } = windowOf(1e5, n, spreadWeights(1e5, spread, 7), 8);
    for (let i = 0; i < 3; i++) summarizeWindow(placement, counts, 0.001);
    const times: number[] = [];
    for (let i = 0; i < 7; i++) {
      const t = performance.now();
      summarizeWindow(placement, counts, 0.001);
      times.push(performance.now() - t);
    }
    times.sort((a, b) => a - b);
    cells.push(`${times[3].toFixed(0)} ms`);
  }
  const name =
    spread === 'uniform'
      ? 'shares uniform on [0.5, 1.5]'
      : `${spread} token${spread === '1' ? '' : 's'} per shard`;
  console.log(`| ${name} | ${cells.join(' | ')} |`);
}

// The empty-shard test where few shards are ever empty: m = 1024, N drawn from 10 000 to
// 20 000 each window (seeded). Each total is new, so no memo helps. Per window: the test
// at the observed empty count (most windows have none, and cost nothing), the test at
// E >= 1 (what a window with an empty shard asks), and the whole window summary.
{
  const draws = new RandomDraws(11);
  const m = 1024;
  const windows = 400;
  const warmUp = 5;
  const rows = new Map<string, { sum: number; worst: number; methods: Map<string, number> }>();
  const time = (row: string, run: () => { method: string } | undefined) => {
    const t = performance.now();
    const method = run()?.method ?? '';
    const ms = performance.now() - t;
    return { row, ms, method };
  };
  let withEmpty = 0;
  for (let w = 0; w < windows; w++) {
    const n = 10_000 + Math.floor(draws.uniform() * 10_000);
    const { placement, counts } = windowOf(m, n, null, 100 + w);
    let empties = 0;
    for (const c of counts) if (c === 0) empties++;
    const results = [
      time('empty-shard test at the observed count', () => emptyShardsTail(placement, empties)),
      time('empty-shard test at E >= 1', () => emptyShardsTail(placement, 1)),
      time('whole window summary', () => {
        summarizeWindow(placement, counts, 0.001);
        return undefined;
      }),
    ];
    if (w < warmUp) continue;
    if (empties > 0) withEmpty++;
    for (const { row, ms, method } of results) {
      const entry = rows.get(row) ?? { sum: 0, worst: 0, methods: new Map<string, number>() };
      entry.sum += ms;
      entry.worst = Math.max(entry.worst, ms);
      if (method !== '') entry.methods.set(method, (entry.methods.get(method) ?? 0) + 1);
      rows.set(row, entry);
    }
  }
  const counted = windows - warmUp;
  console.log('');
  console.log(
    `| m = 1024, N = 10 000-20 000 (${counted} windows, ${withEmpty} with an empty shard) | mean ms a window | worst ms | methods |`,
  );
  console.log('| --- | --- | --- | --- |');
  for (const [row, entry] of rows) {
    const methods = [...entry.methods].map(([k, v]) => `${k} ${v}`).join(', ');
    console.log(
      `| ${row} | ${(entry.sum / counted).toFixed(3)} | ${entry.worst.toFixed(2)} | ${methods} |`,
    );
  }
}
