// Calibration of the verdicts: on simulated windows (exact multinomial draws, seeded), how
// often each finding holds under pure chance, how often a planted fault is found and how
// soon it becomes an incident, what the static max/mean rules of common practice (no
// source) do beside it, and what each spread mode reports for Zipf-keyed traffic with
// nothing planted. Prints Markdown tables on stdout, progress on stderr.
// Over-dispersed (negative binomial), Zipf-keyed and drifting traffic at the defaults.
// Run: npx tsx bench/calibration.bench.ts [--scale F] [--clumped-only]   (F scales every window count; default 1)
import { makePlacement } from '../src/chance/placement.js';
import { fullestQuantile } from '../src/chance/shard-extremes.js';
import type { JudgeSettings } from '../src/judge/judge-settings.js';
import { runScenario } from '../src/scenario/scenario-run.js';
import {
  chanceRates,
  clumpedRates,
  plantedPower,
  standardError,
  staticLimits,
  unevenTrafficReport,
  type Plant,
} from './calibration-runs.js';

const scaleAt = process.argv.indexOf('--scale');
const scale = scaleAt > 0 ? Number(process.argv[scaleAt + 1]) : 1;
if (!(scale > 0))
  throw new Error(`--scale must be a number above 0, got ${process.argv[scaleAt + 1]}`);
const windows = (count: number) => Math.max(1, Math.round(count * scale));

const shards = 64;
const began = performance.now();
const progress = (text: string) =>
  process.stderr.write(`[${((performance.now() - began) / 1000).toFixed(0)} s] ${text}\n`);

/** A rate as a percentage with two significant digits, never in exponent form. */
const percent = (rate: number) => (rate === 0 ? '0' : `${Number((100 * rate).toPrecision(2))}%`);
const staticHeads = staticLimits.map((limit) => `max/mean > ${limit.toFixed(1)}`);
const row = (cells: (string | number)[]) => `| ${cells.join(' | ')} |`;
const head = (cells: string[]) => [row(cells), row(cells.map(() => '---'))].join('\n');

function falseFindings(): string {
  const lines = [
    `### False findings per window under pure chance (${shards} equal shards, null uniform)`,
    '',
    'Every finding here is false. "fullest test" is the fullest-shard test alone (no +20% practical floor);',
    '"hotspot", "cold", "uneven" are the findings with the default settings (--min-excess 0.2,',
    '--min-dispersion 1.5), spread mode auto (the default) and, in brackets, exact. Both alphas judge the',
    'same windows. "limit" is alpha + 2 Monte Carlo standard errors; ok when every rate is within it.',
    '',
    head([
      'N/m',
      'alpha',
      'windows',
      'fullest test',
      'hotspot',
      'cold',
      'uneven',
      'any (exact)',
      'limit',
      'ok',
      'too little traffic',
      ...staticHeads,
    ]),
  ];
  for (const perShard of [1, 3, 10, 30, 100, 1000, 10000]) {
    const count = windows(perShard >= 1000 ? 10_000 : 20_000);
    const variants: Partial<JudgeSettings>[] = [
      { alpha: 0.01, spread: 'auto' },
      { alpha: 0.01, spread: 'exact' },
      { alpha: 0.001, spread: 'auto' },
      { alpha: 0.001, spread: 'exact' },
    ];
    const [auto01, exact01, auto001, exact001] = chanceRates(
      { shards, perShard, windows: count, seed: 1000 + perShard },
      variants,
    );
    for (const [alpha, auto, exact] of [
      [0.01, auto01, exact01],
      [0.001, auto001, exact001],
    ] as const) {
      const limit = alpha + 2 * standardError(alpha, count);
      const rates = [
        auto.fullestTest,
        auto.hotspot,
        auto.cold,
        auto.uneven,
        exact.hotspot,
        exact.cold,
        exact.uneven,
      ];
      lines.push(
        row([
          perShard,
          alpha,
          count,
          percent(auto.fullestTest),
          `${percent(auto.hotspot)} (${percent(exact.hotspot)})`,
          `${percent(auto.cold)} (${percent(exact.cold)})`,
          `${percent(auto.uneven)} (${percent(exact.uneven)})`,
          percent(exact.anyFinding),
          percent(limit),
          rates.every((rate) => rate <= limit) ? 'yes' : '**no**',
          percent(auto.tooLittleTraffic),
          ...auto.staticAlarms.map(percent),
        ]),
      );
    }
    progress(`chance N/m ${perShard}: ${count} windows`);
  }
  return lines.join('\n');
}

function power(): string {
  const alpha = 0.001;
  const lines = [
    `### Planted faults on one of ${shards} shards (alpha ${alpha}, --confirm 3, spread auto)`,
    '',
    'Episodes of 30 windows with the fault, then 10 without, one judge throughout. "found" is the share of',
    'fault windows with the finding and the planted shard flagged (in brackets with spread exact);',
    '"incident" the share of episodes whose incident opened while the fault lasted, "windows to',
    'incident" the median from the first fault window. The static rules count a hit when max/mean exceeds',
    'the limit and the planted shard is the fullest; they never look at the emptiest shard.',
    '',
    head([
      'fault',
      'N/m',
      'chance ceiling',
      'windows',
      'found',
      'incident',
      'windows to incident',
      ...staticHeads,
    ]),
  ];
  const cases: [Plant, number][] = [];
  for (const factor of [1.3, 1.5, 2, 3]) {
    for (const perShard of [10, 100, 1000]) cases.push([{ kind: 'hotspot', factor }, perShard]);
  }
  for (const perShard of [10, 30, 100]) cases.push([{ kind: 'dead' }, perShard]);
  for (const [plant, perShard] of cases) {
    const faultWindows = windows(600);
    const settings = { shards, perShard, windows: faultWindows, seed: 2000 + perShard, plant };
    const auto = plantedPower({ ...settings, judge: { alpha, spread: 'auto' } });
    const exact = plantedPower({ ...settings, judge: { alpha, spread: 'exact' } });
    const ceiling = fullestQuantile(makePlacement(shards * perShard, shards), 1 - alpha);
    lines.push(
      row([
        plant.kind === 'hotspot' ? `hotspot ${plant.factor}x` : 'dead shard',
        perShard,
        `${ceiling.toFixed(2)}x`,
        auto.faultWindows,
        `${percent(auto.detection)} (${percent(exact.detection)})`,
        percent(auto.confirmed),
        Number.isFinite(auto.medianWindowsToIncident) ? auto.medianWindowsToIncident : 'never',
        ...(plant.kind === 'hotspot'
          ? auto.staticHits.map(percent)
          : staticLimits.map(() => 'n/a')),
      ]),
    );
    progress(`power ${plant.kind} ${plant.kind === 'hotspot' ? plant.factor : ''} N/m ${perShard}`);
  }
  return lines.join('\n');
}

function unevenTraffic(): string {
  const alpha = 0.001;
  const zipf = runScenario('zipf-keys', { seed: 1, startMs: 0, durationMs: 1000 }).truth
    .trafficShares;
  const ring = runScenario('weighted', { seed: 1, startMs: 0, durationMs: 1000 }).truth
    .declaredShares;
  const lines = [
    `### Broadly uneven traffic, nothing planted (${shards} shards, alpha ${alpha})`,
    '',
    'Zipf-keyed: 5000 keys with Zipf(0.9) popularity hashed to the shards (the zipf-keys scenario), so',
    'shards carry unequal shares with perfect hashing; judged against equal declared shares. Ring: a',
    'consistent-hash ring with 16 tokens per shard (the weighted scenario), judged against equal shares',
    'and against its shard map. The baseline rows learn for 60 windows first (span 60) and count the next.',
    'Every hotspot here is a shard whose usual share is large, not a fault.',
    '',
    head([
      'traffic',
      'N/m',
      'null, spread',
      'windows',
      'hotspot',
      'uneven',
      'chance',
      'flagged per window',
      'median phi',
      'median robust phi',
      ...staticHeads,
    ]),
  ];
  const modes: [string, Partial<JudgeSettings>, number][] = [
    ['uniform, exact', { null: 'uniform', spread: 'exact' }, 0],
    ['uniform, robust', { null: 'uniform', spread: 'robust' }, 0],
    ['uniform, auto', { null: 'uniform', spread: 'auto' }, 0],
    ['baseline, auto', { null: 'baseline', spread: 'auto' }, 60],
  ];
  for (const perShard of [10, 100, 1000]) {
    for (const [label, judge, warmupWindows] of modes) {
      const count = windows(judge.null === 'baseline' ? 150 : 300);
      const report = unevenTrafficReport({
        shards,
        perShard,
        windows: count,
        seed: 3000 + perShard,
        trafficShares: zipf,
        warmupWindows,
        judge: { alpha, ...judge },
      });
      lines.push(
        row([
          'Zipf keys',
          perShard,
          label,
          count,
          percent(report.hotspot),
          percent(report.uneven),
          percent(report.chance),
          report.meanFlagged.toFixed(2),
          report.medianPhi.toFixed(1),
          report.medianRobustPhi.toFixed(1),
          ...report.staticAlarms.map(percent),
        ]),
      );
      progress(`zipf N/m ${perShard} ${label}`);
    }
  }
  for (const perShard of [100, 1000]) {
    for (const [label, judge, declared] of [
      ['uniform, auto', { null: 'uniform', spread: 'auto' }, false],
      ['map, auto', { null: 'map', spread: 'auto' }, true],
    ] as const) {
      const count = windows(200);
      const report = unevenTrafficReport({
        shards,
        perShard,
        windows: count,
        seed: 4000 + perShard,
        trafficShares: ring,
        declaredWeights: declared ? ring : undefined,
        judge: { alpha, ...judge },
      });
      lines.push(
        row([
          'ring, 16 tokens',
          perShard,
          label,
          count,
          percent(report.hotspot),
          percent(report.uneven),
          percent(report.chance),
          report.meanFlagged.toFixed(2),
          report.medianPhi.toFixed(1),
          report.medianRobustPhi.toFixed(1),
          ...report.staticAlarms.map(percent),
        ]),
      );
      progress(`ring N/m ${perShard} ${label}`);
    }
  }
  return lines.join('\n');
}

function clumpedTraffic(): string {
  const alpha = 0.001;
  const zipf = runScenario('zipf-keys', { seed: 1, startMs: 0, durationMs: 1000 }).truth
    .trafficShares;
  const lines = [
    `### Clumped (over-dispersed) traffic, defaults (${shards} equal shards, alpha ${alpha}, spread auto)`,
    '',
    'Independent negative binomial counts per shard (variance phi x mean; bench/overdispersed-draws.ts),',
    'after 60 windows of learning. Nothing planted: every hotspot, cold and uneven is false. Zipf keys: the',
    'zipf-keys shares drawn multinomially, judged against equal shares. Drift: the traffic level moves',
    'slowly between 0.3x and 1.7x (a sine over 400 windows). "lumpy" counts windows whose notes call the',
    'traffic lumpy; the static rules beside.',
    '',
    head([
      'traffic',
      'mean/shard',
      'phi',
      'windows',
      'hotspot',
      'cold',
      'uneven',
      'too little traffic',
      'lumpy',
      'median learned phi',
      ...staticHeads,
    ]),
  ];
  const cases: [string, number, number, Partial<Parameters<typeof clumpedRates>[0]>][] = [];
  for (const phi of [1.5, 3, 10]) {
    for (const perShard of [0.5, 2, 10, 100, 1000, 10000]) cases.push(['NB', perShard, phi, {}]);
  }
  cases.push(['Zipf keys', 100, 1, { trafficShares: zipf }]);
  cases.push(['Zipf keys', 10000, 1, { trafficShares: zipf }]);
  cases.push([
    'NB, drift',
    100,
    3,
    { level: (index: number) => 1 + 0.7 * Math.sin((2 * Math.PI * index) / 400) },
  ]);
  for (const [label, perShard, phi, extra] of cases) {
    const count = windows(1000);
    const rates = clumpedRates({
      shards,
      perShard,
      phi,
      windows: count,
      warmupWindows: 60,
      seed: 5000 + Math.round(perShard * 10) + Math.round(phi * 100),
      ...extra,
    });
    lines.push(
      row([
        label,
        perShard,
        phi,
        count,
        percent(rates.hotspot),
        percent(rates.cold),
        percent(rates.uneven),
        percent(rates.tooLittleTraffic),
        percent(rates.lumpy),
        rates.medianLearnedPhi.toFixed(2),
        ...rates.staticAlarms.map(percent),
      ]),
    );
    progress(`clumped ${label} mean ${perShard} phi ${phi}`);
  }
  lines.push(
    '',
    'Planted hotspot on shard 0 of clumped traffic (found: windows with hotspot and shard 0 flagged; other',
    'hot: other shards flagged hot per window).',
    '',
    head(['planted', 'mean/shard', 'phi', 'windows', 'found', 'other hot per window']),
  );
  for (const [factor, perShard, phi, extra] of [
    [2, 100, 3, {}],
    [1.5, 1000, 3, {}],
    [1.3, 10000, 3, {}],
    [2, 100, 10, {}],
    [5.3, 10000, 1, { trafficShares: zipf }],
  ] as const) {
    const count = windows(300);
    const rates = clumpedRates({
      shards,
      perShard,
      phi,
      windows: count,
      warmupWindows: 60,
      seed: 6000 + perShard + factor * 10,
      hotFactor: factor,
      ...extra,
    });
    lines.push(
      row([
        `${factor}x${'trafficShares' in extra ? ' on Zipf keys' : ''}`,
        perShard,
        phi,
        count,
        percent(rates.detection),
        rates.otherHot.toFixed(2),
      ]),
    );
    progress(`clumped power ${factor}x mean ${perShard} phi ${phi}`);
  }
  return lines.join('\n');
}

const only = process.argv.includes('--clumped-only');
const sections = only
  ? [clumpedTraffic()]
  : [falseFindings(), power(), unevenTraffic(), clumpedTraffic()];
process.stdout.write(
  [
    `Calibration, seeded (command: npx tsx bench/calibration.bench.ts${scale === 1 ? '' : ` --scale ${scale}`}${only ? ' --clumped-only' : ''}).`,
    '',
    ...sections.flatMap((section) => [section, '']),
  ].join('\n'),
);
progress('done');
