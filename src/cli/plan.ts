import { gonnetExpectedMaximum, raabStegerMaximum } from '../chance/asymptotics.js';
import { makePlacement } from '../chance/placement.js';
import { fullestQuantile, fullestTail } from '../chance/shard-extremes.js';
import { simulateTwoChoice, type TwoChoiceEstimate } from '../scenario/two-choice-placement.js';
import { UsageError } from '../errors/usage-error.js';
import { formatNumber, reportedProbability } from './chance-report.js';
import type { Command } from './command.js';
import { summaryOf } from './command-list.js';
import { duration, finiteNumber, parseOptions, probability, wholeNumber } from './option-values.js';

const HELP = `Usage: shardwise plan --rate R --capacity C --shards M|A..B [options]

Headroom planning from chance alone: how far above the fair share random placement pushes
the fullest shard, and whether a shard's capacity is at risk, before any real hotspot.

Options:
  --rate R            requests per second across the whole system (> 0)
  --window D          window the capacity is judged over (default 10s; 500ms, 1m, ...)
  --capacity C        requests per second one shard can serve (> 0)
  --shards M | A..B   one shard count, or a range: every power of two in it plus its ends
  --quantile Q        level of the chance ceiling (default 0.999)
  --target T          acceptable chance per day that some shard exceeds its capacity
                      (default 0.01); the smallest shard count (and, for one shard count,
                      the largest rate) that keeps below it is reported
  --two-choice        add a what-if: each request to the less loaded of two random shards,
                      by seeded simulation with 95% intervals
  --simulations S     simulated windows for --two-choice (default 40)
  --seed S            seed for --two-choice (default 1)
  --json              one JSON object instead of the table
  --help              this text

The per-day figure treats windows as independent: 1 - (1 - p)^(windows per day).
A chance below 1e-300 a window is shown as "< 1e-300" and its day as the bound that
gives ("< 1e-296" for 10 s windows); --json then has 1e-300 and "exceedIsBound": true.
Asymptotic forms (Raab and Steger 1998; Gonnet 1981 when N = m) are shown as a
cross-check only.
`;

interface Row {
  shards: number;
  requestsPerWindow: number;
  fairShare: number;
  ceiling: number;
  headroom: number;
  exceedPerWindow: number;
  exceedPerDay: number;
  /**
   * True when the chance per window is below the reporting floor 1e-300: both exceed
   * figures are then upper bounds (1e-300, and 1e-300 times the windows in a day).
   */
  exceedIsBound: boolean;
  asymptotic: { count: number | null; regime: string; source: string };
  gonnet?: number;
  twoChoice?: TwoChoiceEstimate;
}

function parseShardCounts(raw: string): number[] {
  const range = /^(\d+)\.\.(\d+)$/.exec(raw.trim());
  if (!range) return [wholeNumber('--shards', raw, 1)];
  const low = wholeNumber('--shards', range[1], 1);
  const high = wholeNumber('--shards', range[2], 1);
  if (high < low)
    throw new UsageError('--shards', raw, 'is an empty range (the end is below the start)');
  if (high > 1e6) throw new UsageError('--shards', raw, 'reaches past 1000000 shards');
  const counts = new Set<number>([low]);
  for (let p = 1; p <= high; p *= 2) if (p > low) counts.add(p);
  counts.add(high);
  return [...counts].sort((a, b) => a - b);
}

/** Probabilities below this are reported as this (and said to be a bound). */
const PROBABILITY_FLOOR = 1e-300;

function perDay(perWindow: number, windowMs: number): number {
  const windows = 86_400_000 / windowMs;
  if (perWindow >= 1) return 1;
  return -Math.expm1(windows * Math.log1p(-perWindow));
}

function exceedChance(shards: number, requests: number, capacityPerWindow: number): number {
  if (requests === 0) return 0;
  const placement = makePlacement(requests, shards);
  const limit = Math.floor(capacityPerWindow) + 1;
  return reportedProbability(fullestTail(placement, (limit * shards) / requests));
}

export const planCommand: Command = {
  name: 'plan',
  summary: summaryOf('plan'),
  help: HELP,
  async run(argv, io) {
    const values = parseOptions(argv, {
      rate: { type: 'string' },
      window: { type: 'string', default: '10s' },
      capacity: { type: 'string' },
      shards: { type: 'string' },
      quantile: { type: 'string', default: '0.999' },
      target: { type: 'string', default: '0.01' },
      'two-choice': { type: 'boolean' },
      simulations: { type: 'string', default: '40' },
      seed: { type: 'string', default: '1' },
      json: { type: 'boolean' },
    });
    for (const required of ['rate', 'capacity', 'shards'] as const) {
      if (values[required] === undefined) throw new UsageError(`--${required}`, '', 'is required');
    }
    const rate = finiteNumber('--rate', values.rate!, { min: 0, minExclusive: true });
    const capacity = finiteNumber('--capacity', values.capacity!, { min: 0, minExclusive: true });
    const windowMs = duration('--window', values.window!);
    const level = probability('--quantile', values.quantile!);
    const target = probability('--target', values.target!);
    const simulations = wholeNumber('--simulations', values.simulations!, 1);
    const seed = wholeNumber('--seed', values.seed!, 0);
    const counts = parseShardCounts(values.shards!);
    const requests = Math.round((rate * windowMs) / 1000);
    if (!Number.isSafeInteger(requests))
      throw new UsageError('--rate', values.rate!, 'times the window is beyond 2^53 requests');
    const capacityPerWindow = (capacity * windowMs) / 1000;

    const rows: Row[] = counts.map((shards) => {
      const placement = makePlacement(requests, shards);
      const fair = requests / shards;
      const ceiling = requests === 0 ? 0 : Math.round(fullestQuantile(placement, level) * fair);
      const exceed = exceedChance(shards, requests, capacityPerWindow);
      const row: Row = {
        shards,
        requestsPerWindow: requests,
        fairShare: fair,
        ceiling,
        headroom: fair > 0 ? ceiling / fair : 0,
        exceedPerWindow: exceed,
        exceedPerDay: perDay(exceed, windowMs),
        exceedIsBound: exceed > 0 && exceed <= PROBABILITY_FLOOR,
        asymptotic: raabStegerMaximum(requests, shards),
      };
      if (requests === shards) row.gonnet = gonnetExpectedMaximum(shards);
      if (values['two-choice']) {
        const runs = Math.max(1, Math.min(simulations, Math.floor(2e8 / Math.max(1, requests))));
        row.twoChoice = simulateTwoChoice(shards, requests, capacityPerWindow, runs, seed);
      }
      return row;
    });

    // Smallest shard count meeting the target, searched over 1..1e6 (the chance only falls as shards are added).
    const meets = (shards: number) =>
      perDay(exceedChance(shards, requests, capacityPerWindow), windowMs) <= target;
    let smallestShards: number | null = null;
    if (meets(1e6)) {
      let lo = 0;
      let hi = 1e6;
      while (hi - lo > 1) {
        const mid = Math.floor((lo + hi) / 2);
        if (meets(mid)) hi = mid;
        else lo = mid;
      }
      smallestShards = hi;
    }
    let largestRate: number | null = null;
    if (counts.length === 1) {
      const shards = counts[0];
      const ok = (r: number) =>
        perDay(
          exceedChance(shards, Math.round((r * windowMs) / 1000), capacityPerWindow),
          windowMs,
        ) <= target;
      let lo = 0;
      let hi = capacity * shards;
      if (ok(hi)) largestRate = hi;
      else {
        for (let i = 0; i < 60 && hi - lo > 1e-6 * hi; i++) {
          const mid = (lo + hi) / 2;
          if (ok(mid)) lo = mid;
          else hi = mid;
        }
        largestRate = lo;
      }
    }
    const result = {
      rate,
      windowSeconds: windowMs / 1000,
      capacity,
      capacityPerWindow,
      quantile: level,
      target,
      rows,
      smallestShardsMeetingTarget: smallestShards,
      largestRateMeetingTarget: largestRate,
    };
    if (values.json) {
      io.stdout.write(`${JSON.stringify(result)}\n`);
      return 0;
    }
    const lines = [
      `${formatNumber(rate)} requests/s, ${windowMs / 1000}s windows (${requests} requests each), capacity ${formatNumber(capacity)} requests/s per shard (${formatNumber(capacityPerWindow)} per window)`,
      '',
      `shards  fair share  ceiling@${level}  headroom  P(exceed)/window  P(exceed)/day  asymptotic`,
    ];
    for (const r of rows) {
      lines.push(
        [
          String(r.shards).padStart(6),
          formatNumber(r.fairShare).padStart(10),
          String(r.ceiling).padStart(8 + String(level).length),
          `${formatNumber(r.headroom, 4)}x`.padStart(8),
          (r.exceedIsBound ? '< 1e-300' : formatNumber(r.exceedPerWindow, 4)).padStart(16),
          (r.exceedIsBound
            ? `< 1e${Math.ceil(Math.log10(r.exceedPerDay))}`
            : formatNumber(r.exceedPerDay, 4)
          ).padStart(13),
          (r.asymptotic.count === null
            ? `- (${r.asymptotic.regime})`
            : formatNumber(r.asymptotic.count, 6)
          ).padStart(10),
        ].join('  '),
      );
      if (r.gonnet !== undefined)
        lines.push(`        N = m: expected fullest ${formatNumber(r.gonnet, 4)} (Gonnet 1981)`);
      if (r.twoChoice) {
        const t = r.twoChoice;
        lines.push(
          `        two choices: fullest ${formatNumber(t.meanMaximum, 5)} [${formatNumber(t.meanInterval[0], 5)}, ${formatNumber(t.meanInterval[1], 5)}], P(exceed)/window ${formatNumber(t.exceedProbability, 3)} [${formatNumber(t.exceedInterval[0], 3)}, ${formatNumber(t.exceedInterval[1], 3)}] over ${t.runs} simulated windows`,
        );
      }
    }
    lines.push('');
    lines.push(
      smallestShards === null
        ? `No shard count up to 1000000 keeps P(exceed)/day <= ${target}.`
        : `Smallest shard count with P(exceed)/day <= ${target}: ${smallestShards}`,
    );
    if (largestRate !== null)
      lines.push(
        `Largest rate on ${counts[0]} shards with P(exceed)/day <= ${target}: ${formatNumber(largestRate)} requests/s`,
      );
    lines.push(`Asymptotic column: ${RAAB_NOTE}`, '');
    io.stdout.write(lines.join('\n'));
    return 0;
  },
};

const RAAB_NOTE =
  'Raab and Steger (1998), fullest shard with high probability; a cross-check only.';
