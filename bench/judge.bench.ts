// Time to judge one closed window (Judge.judge: null shares, spread, robust spread, chance
// ceiling and floor, fullest/emptiest/empty tails, flagged shards, persistence), one core.
// Every window has a different total, so the judge's memo of chance answers never hits:
// these are cold-cache times, as for live traffic whose totals vary. The target for
// m = 1e4 is under 5 ms per window. Counts are drawn (untimed) from Multinomial(N, 1/m).
// Run: npx tsx bench/judge.bench.ts [windows per case, default 40]
import { Judge } from '../src/judge/judge.js';
import { defaultJudgeSettings, type JudgeSettings } from '../src/judge/judge-settings.js';
import { ShardUniverse } from '../src/window/shard-universe.js';
import { MultinomialDraws } from './multinomial-draws.js';
import { summaryRow } from './summary-row.js';

const windows = Number(process.argv[2] ?? 40);
if (!Number.isSafeInteger(windows) || windows < 1) {
  throw new Error(`windows per case must be a whole number above 0, got ${process.argv[2]}`);
}
const warmup = 5;

interface Case {
  readonly shards: number;
  readonly perShard: number;
  readonly spread: JudgeSettings['spread'];
  /** Relative weights for a shard map (map null); absent: equal shares. */
  readonly weighted?: boolean;
  readonly windows?: number;
}

function measure(test: Case): { median: number; p95: number; max: number; count: number } {
  const m = test.shards;
  const ids = Array.from({ length: m }, (_, shard) => String(shard));
  const weights = ids.map((_, shard) => 0.75 + (0.5 * ((shard * 7919) % m)) / m);
  const universe = test.weighted
    ? ShardUniverse.fromWeights(ids, weights)
    : ShardUniverse.ofCount(m);
  const judge = new Judge(universe, {
    ...defaultJudgeSettings,
    spread: test.spread,
    null: test.weighted ? 'map' : 'uniform',
    hopMs: 10_000,
  });
  const shares = test.weighted ? universe.shares : null;
  const draws = new MultinomialDraws(7);
  const count = test.windows ?? windows;
  const times: number[] = [];
  for (let index = 0; index < warmup + count; index++) {
    const total = Math.round(m * test.perShard) + index;
    const counts = draws.draw(total, shares, new Float64Array(m));
    const window = {
      start: index * 10_000,
      end: (index + 1) * 10_000,
      counts,
      total,
      late: 0,
      rejected: {},
    };
    const started = performance.now();
    judge.judge(window);
    const elapsed = performance.now() - started;
    if (index >= warmup) times.push(elapsed);
  }
  times.sort((a, b) => a - b);
  return {
    median: times[Math.floor(times.length / 2)],
    p95: times[Math.min(times.length - 1, Math.floor(times.length * 0.95))],
    max: times[times.length - 1],
    count,
  };
}

const cases: Case[] = [];
for (const perShard of [1, 10, 100, 1000, 10000]) {
  for (const spread of ['exact', 'auto', 'robust'] as const)
    cases.push({ shards: 10_000, perShard, spread });
}
for (const perShard of [10, 1000, 6250]) cases.push({ shards: 64, perShard, spread: 'auto' });
for (const perShard of [10, 10000])
  cases.push({ shards: 100_000, perShard, spread: 'auto', windows: 10 });
// Weighted shares with every share distinct: the chance engine's slow path (few windows).
for (const perShard of [10, 1000])
  cases.push({ shards: 64, perShard, spread: 'auto', weighted: true, windows: 10 });
cases.push({ shards: 10_000, perShard: 100, spread: 'auto', weighted: true, windows: 3 });

const lines = [
  `Judge.judge per window, cold memo, one core (command: npx tsx bench/judge.bench.ts ${windows})`,
  '',
  '| shards | N/m | shares | spread | windows | median ms | p95 ms | max ms |',
  '| --- | --- | --- | --- | --- | --- | --- | --- |',
];
for (const test of cases) {
  const result = measure(test);
  lines.push(
    `| ${test.shards} | ${test.perShard} | ${test.weighted ? 'weighted (map)' : 'equal'} | ${test.spread} | ${result.count} | ${result.median.toFixed(2)} | ${result.p95.toFixed(2)} | ${result.max.toFixed(2)} |`,
  );
  process.stderr.write(`${lines[lines.length - 1]}\n`);
  if (test.shards === 64 && test.perShard === 6250) {
    summaryRow(
      'judging one window, m = 64, N/m = 6250',
      `median ${result.median.toFixed(2)} ms, max ${result.max.toFixed(1)} ms`,
      '< 2 ms',
    );
  }
  if (test.shards === 10_000 && test.perShard === 10 && test.spread === 'auto') {
    summaryRow(
      'judging one window, m = 1e4, N/m = 10',
      `median ${result.median.toFixed(2)} ms`,
      '< 5 ms',
    );
  }
}
process.stdout.write(lines.join('\n') + '\n');
