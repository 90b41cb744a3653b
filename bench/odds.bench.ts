// The chance calculator's cost: what `shardwise odds --shards M --requests N` computes
// (fullest and emptiest shard: means and four quantiles each; empty-shard moments), timed
// in process (compute only, median of 3 after one untimed run), and the built CLI's wall
// time for `--version` and a small `odds` (start-up: module loading dominates).
// Run: npx tsx bench/odds.bench.ts [repeats, default 3]   (builds nothing: run `npm run build`
// first for the CLI rows, or use `npm run bench -- odds`, which does)
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { emptyShardMoments } from '../src/chance/empty-shards.js';
import { makePlacement } from '../src/chance/placement.js';
import { emptiestQuantile, fullestQuantile } from '../src/chance/shard-extremes.js';
import { emptiestMean, fullestMean } from '../src/chance/extreme-means.js';
import { median, summaryRow } from './summary-row.js';
import { ringWeights } from './ring-weights.js';

const repeats = Number(process.argv[2] ?? 3);
if (!Number.isSafeInteger(repeats) || repeats < 1) {
  throw new Error(`repeats must be a whole number above 0, got ${process.argv[2]}`);
}
const root = join(dirname(fileURLToPath(import.meta.url)), '..');

/** Everything `odds` prints for equal shares (its queries aside). */
function oddsSummary(shards: number, requests: number): void {
  const placement = makePlacement(requests, shards);
  for (const level of [0.5, 0.9, 0.99, 0.999]) fullestQuantile(placement, level);
  for (const level of [0.001, 0.01, 0.1, 0.5]) emptiestQuantile(placement, level);
  emptyShardMoments(placement);
  fullestMean(placement);
  emptiestMean(placement);
}

const cases: [number, number][] = [
  [16, 1e7],
  [64, 1e6],
  [64, 1e7],
  [256, 1e7],
  [256, 1e9],
  [10, 10],
];
console.log('odds compute, in process (median of ' + repeats + ' after one untimed run)\n');
console.log('| shards | requests | median ms | max ms |');
console.log('| --- | --- | --- | --- |');
for (const [shards, requests] of cases) {
  oddsSummary(shards, requests + 1); // warm-up on a neighbouring total
  const times: number[] = [];
  for (let r = 0; r < repeats; r++) {
    const started = performance.now();
    oddsSummary(shards, requests + 2 + r); // a new total each time: no memo anywhere
    times.push(performance.now() - started);
  }
  const slowest = Math.max(...times);
  const typical = median(times);
  console.log(`| ${shards} | ${requests} | ${typical.toFixed(0)} | ${slowest.toFixed(0)} |`);
  if (shards !== 10) {
    summaryRow(
      `odds compute, ${shards} x ${requests}`,
      `${typical.toFixed(0)} ms`,
      'well under 1 s',
    );
  }
}

// Weighted shares (`odds --shard-map`): demo maps of hash-range sizes, a ring with 16 random
// tokens per shard (gamma(16) shares), the same work as above with the map's shares.
function weightedSummary(weights: Float64Array, requests: number): void {
  const placement = makePlacement(requests, weights.length, weights);
  for (const level of [0.5, 0.9, 0.99, 0.999]) fullestQuantile(placement, level);
  for (const level of [0.001, 0.01, 0.1, 0.5]) emptiestQuantile(placement, level);
  fullestMean(placement);
  emptiestMean(placement);
}
console.log('\nodds compute on a weighted map, in process (one run each, fresh shares)\n');
console.log('| shards | requests | ms |');
console.log('| --- | --- | --- |');
for (const [shards, requests] of [
  [3, 3000],
  [1000, 1e6],
  [10_000, 1e6],
  [10_000, 1e9],
  [100_000, 1e9],
] as const) {
  const started = performance.now();
  weightedSummary(ringWeights(shards, 5), requests);
  const took = performance.now() - started;
  console.log(`| ${shards} | ${requests} | ${took.toFixed(0)} |`);
  if (shards === 100_000)
    summaryRow(`odds compute, weighted map, ${shards} x ${requests}`, `${took.toFixed(0)} ms`, '');
}

const cli = join(root, 'dist', 'cli', 'main.js');
if (!existsSync(cli)) {
  console.log('\n(no dist/cli/main.js: run `npm run build` for the start-up rows)');
} else {
  console.log('\nbuilt CLI, wall time (median of ' + repeats + ')\n');
  const wall = (args: string[]): number => {
    const times: number[] = [];
    for (let r = 0; r < repeats; r++) {
      const started = performance.now();
      const run = spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8' });
      if (run.status !== 0) throw new Error(`shardwise ${args.join(' ')} failed: ${run.stderr}`);
      times.push(performance.now() - started);
    }
    return median(times);
  };
  const version = wall(['--version']);
  const small = wall(['odds', '--shards', '10', '--requests', '10']);
  const big = wall(['odds', '--shards', '16', '--requests', '10000000']);
  console.log(`shardwise --version                          ${version.toFixed(0)} ms`);
  console.log(`shardwise odds --shards 10 --requests 10      ${small.toFixed(0)} ms`);
  console.log(`shardwise odds --shards 16 --requests 1e7     ${big.toFixed(0)} ms`);
  summaryRow('shardwise --version (built CLI, wall)', `${version.toFixed(0)} ms`, '< 300 ms');
  summaryRow('shardwise odds 10 x 10 (built CLI, wall)', `${small.toFixed(0)} ms`, '< 400 ms');
}
