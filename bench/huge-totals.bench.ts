// Judging one window at huge totals (up to 2^53 - 1 requests), equal and weighted shares,
// m from 3 to 1e5 (Judge.judge, one core); ten weighted shards at 1e12 take every pair's
// joint tail in S1 - S2 (README, "Regimes at huge totals"). Each case judges `windows`
// windows with totals N, N - 1, ... (the judge's memo never hits); the first is cold
// (tables, JIT), so it is
// shown apart from the median of the rest. Counts are drawn (untimed) from the normal limit
// of the multinomial, rounded, the remainder put on the largest count.
// Run: npx tsx bench/huge-totals.bench.ts [windows per case, default 3]
import { Judge } from '../src/judge/judge.js';
import { defaultJudgeSettings } from '../src/judge/judge-settings.js';
import { ShardUniverse } from '../src/window/shard-universe.js';

const windows = Number(process.argv[2] ?? 3);
if (!Number.isSafeInteger(windows) || windows < 1) {
  throw new Error(`windows per case must be a whole number above 0, got ${process.argv[2]}`);
}

function counts(total: number, shares: Float64Array | null, m: number, seed: number): Float64Array {
  const out = new Float64Array(m);
  let s = seed;
  const uniform = () => {
    s = (s * 16807) % 2147483647;
    return s / 2147483647;
  };
  const deviation = new Float64Array(m);
  let sum = 0;
  for (let i = 0; i < m; i++) {
    const mean = total * (shares === null ? 1 / m : shares[i]);
    const z = Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
    deviation[i] = Math.sqrt(mean) * z;
    sum += deviation[i];
  }
  let placed = 0;
  let largest = 0;
  for (let i = 0; i < m; i++) {
    const share = shares === null ? 1 / m : shares[i];
    out[i] = Math.max(0, Math.round(total * share + deviation[i] - share * sum));
    placed += out[i];
    if (out[i] > out[largest]) largest = i;
  }
  out[largest] += total - placed;
  return out;
}

const cases: [string, number, number, boolean][] = [
  ['3e15 on 3', 3e15, 3, false],
  ['1e14 x 64', 64e14, 64, false],
  ['2^53-1 on 1e5', 2 ** 53 - 1, 1e5, false],
  ['1e12 on 1e5', 1e12, 1e5, false],
  ['3e15 on 3', 3e15, 3, true],
  ['1e14 x 64', 64e14, 64, true],
  ['1e12 on 10', 1e12, 10, true],
  ['2^53-1 on 1e5', 2 ** 53 - 1, 1e5, true],
  ['1e12 on 1e5', 1e12, 1e5, true],
];
console.log('case            shares    first ms  rest median ms  fullest p  floor       ceiling');
for (const [name, total, m, weighted] of cases) {
  const ids = Array.from({ length: m }, (_, i) => String(i));
  const weights = ids.map((_, i) => 0.75 + (0.5 * ((i * 7919) % m)) / m);
  const universe = weighted ? ShardUniverse.fromWeights(ids, weights) : ShardUniverse.ofCount(m);
  const judge = new Judge(universe, {
    ...defaultJudgeSettings,
    null: weighted ? 'map' : 'uniform',
    hopMs: 10_000,
  });
  const times: number[] = [];
  let last = '';
  for (let k = 0; k < windows; k++) {
    const n = total - k;
    const c = counts(n, weighted ? universe.shares : null, m, 12345 + k);
    const started = performance.now();
    const j = judge.judge({
      start: k * 10_000,
      end: (k + 1) * 10_000,
      counts: c,
      total: n,
      late: 0,
      rejected: {},
    });
    times.push(performance.now() - started);
    last = `${(j.fullest?.p ?? NaN).toPrecision(3).padStart(9)}  ${(j.floor?.relative ?? NaN).toFixed(9)} ${j.ceiling.relative.toFixed(9)}`;
  }
  const rest = times.slice(1).sort((a, b) => a - b);
  const median = rest.length > 0 ? rest[Math.floor(rest.length / 2)] : NaN;
  console.log(
    `${name.padEnd(15)} ${(weighted ? 'weighted' : 'equal').padEnd(9)} ${times[0].toFixed(0).padStart(8)}  ${median.toFixed(0).padStart(14)}  ${last}`,
  );
}
