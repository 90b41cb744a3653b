import { Judge } from '../src/judge/judge.js';
import { defaultJudgeSettings } from '../src/judge/judge-settings.js';
import { RandomDraws } from '../src/scenario/random-draws.js';
import { ShardUniverse } from '../src/window/shard-universe.js';

/**
 * Incidents on over-dispersed traffic with no fault planted: each shard's count per window
 * is negative binomial with variance phi x mean (a Poisson count whose mean is a gamma draw
 * with shape mean / (phi - 1)), 64 declared shards, default judge settings, 10 s windows.
 * Prints incidents opened, cleared and open at the end per (mean per shard, phi).
 *
 *   npx tsx bench/bursty-traffic.bench.ts [windows] [seed]
 */

const windows = Number(process.argv[2] ?? 2000);
const seed = Number(process.argv[3] ?? 1);
const shards = 64;
const hopMs = 10_000;

/** Gamma(shape, 1) by Marsaglia and Tsang (ACM TOMS 26(3), 2000); shape < 1 by boosting. */
function gamma(draws: RandomDraws, shape: number): number {
  if (shape < 1) return gamma(draws, shape + 1) * draws.uniform() ** (1 / shape);
  const d = shape - 1 / 3;
  const c = 1 / Math.sqrt(9 * d);
  for (;;) {
    let x: number;
    let v: number;
    do {
      // Standard normal by Box and Muller (1958).
      x = Math.sqrt(-2 * Math.log(1 - draws.uniform())) * Math.cos(2 * Math.PI * draws.uniform());
      v = 1 + c * x;
    } while (v <= 0);
    v = v * v * v;
    const u = draws.uniform();
    if (Math.log(u) < 0.5 * x * x + d - d * v + d * Math.log(v)) return d * v;
  }
}

function run(mean: number, phi: number) {
  const draws = new RandomDraws(seed);
  const universe = ShardUniverse.ofCount(shards);
  const judge = new Judge(universe, { ...defaultJudgeSettings, hopMs });
  let opened = 0;
  let cleared = 0;
  let openAtEnd = 0;
  let cusumOpened = 0;
  let tooLittle = 0;
  for (let w = 0; w < windows; w++) {
    const counts = new Float64Array(shards);
    let total = 0;
    for (let s = 0; s < shards; s++) {
      const rate = phi > 1 ? gamma(draws, mean / (phi - 1)) * (phi - 1) : mean;
      counts[s] = draws.poisson(rate);
      total += counts[s];
    }
    const verdict = judge.judge({
      start: w * hopMs,
      end: (w + 1) * hopMs,
      counts,
      total,
      late: 0,
      rejected: {},
    });
    opened += verdict.opened.length;
    cusumOpened += verdict.opened.filter(
      (incident) => (incident as { test?: string }).test === 'cusum',
    ).length;
    cleared += verdict.cleared.length;
    openAtEnd = verdict.incidents.length;
    if (verdict.findings.includes('too little traffic')) tooLittle++;
  }
  return { mean, phi, windows, tooLittle, opened, cusumOpened, cleared, openAtEnd };
}

const rows = [
  [2, 3],
  [0.5, 3],
  [20, 3],
  [100, 3],
  [100, 1],
  [1000, 1],
] as const;
console.log(
  '| mean per shard | phi | windows | too little | opened | by cusum | cleared | open at end |',
);
console.log('| --- | --- | --- | --- | --- | --- | --- | --- |');
for (const [mean, phi] of rows) {
  const r = run(mean, phi);
  console.log(
    `| ${r.mean} | ${r.phi} | ${r.windows} | ${r.tooLittle} | ${r.opened} | ${r.cusumOpened} | ${r.cleared} | ${r.openAtEnd} |`,
  );
}
