import { emptyShardMoments, emptyShardsTail } from '../chance/empty-shards.js';
import { makePlacement, type Placement } from '../chance/placement.js';
import {
  emptiestQuantile,
  emptiestTail,
  fullestQuantile,
  fullestTail,
} from '../chance/shard-extremes.js';
import { emptiestMean, fullestMean } from '../chance/extreme-means.js';
import { readShardMapFile } from '../ingest/shard-map-file.js';
import { UsageError } from '../errors/usage-error.js';
import type { Command } from './command.js';
import { summaryOf } from './command-list.js';
import { formatNumber, reportedProbability } from './chance-report.js';
import { finiteNumber, parseOptions, wholeNumber } from './option-values.js';

const HELP = `Usage: shardwise odds (--shards M | --shard-map FILE) --requests N [queries] [--json]

The chance calculator: what random placement alone does to N requests on M shards.
Prints the fullest shard's mean and upper quantiles, the emptiest shard's mean and lower
quantiles, and the mean and variance of the number of empty shards, then answers queries.

Options:
  --shards M            number of shards with equal shares (whole number >= 1)
  --shard-map FILE      unequal shares instead: CSV "shard,weight" or JSON {"s-0": 1.0, ...};
                        then loads are relative loads r = x / (N p) and queries take r too
  --requests N          requests placed at random (whole number, 0 to 2^53-1)
  --max-at-least K      P(fullest shard >= K)            (repeatable; answer "max>=K")
  --min-at-most K       P(emptiest shard <= K)           (repeatable; answer "min<=K")
  --empty-at-least E    P(at least E shards get nothing) (repeatable; answer "empty>=E")
  --json                one JSON object instead of the table
  --help                this text

Example: shardwise odds --shards 365 --requests 23 --max-at-least 2 --json
  (the birthday problem: probability 0.5072972343239857)

Probabilities below 1e-300 are reported as 1e-300; impossible events as 0. Queries are
answered in the order given.
`;

interface Query {
  readonly kind: 'max' | 'min' | 'empty';
  readonly raw: string;
  readonly value: number;
}

/** Collect the query flags in command-line order (parseArgs groups repeats by name). */
function queriesInOrder(argv: readonly string[], weighted: boolean): Query[] {
  const out: Query[] = [];
  for (let i = 0; i < argv.length; i++) {
    const [flag, inline] = argv[i].split('=', 2) as [string, string | undefined];
    const kind =
      flag === '--max-at-least'
        ? 'max'
        : flag === '--min-at-most'
          ? 'min'
          : flag === '--empty-at-least'
            ? 'empty'
            : null;
    if (kind === null) continue;
    const raw = inline ?? argv[i + 1];
    if (inline === undefined) i++;
    const value =
      kind === 'empty' || !weighted
        ? wholeNumber(flag, raw, 0)
        : finiteNumber(flag, raw, { min: 0 });
    out.push({ kind, raw, value });
  }
  return out;
}

function answer(placement: Placement, q: Query): number {
  const fair = placement.total / placement.shardCount;
  const weighted = placement.shares !== null;
  if (q.kind === 'max') {
    if (placement.total === 0) return q.value <= 0 ? 1 : 0;
    return reportedProbability(fullestTail(placement, weighted ? q.value : q.value / fair));
  }
  if (q.kind === 'min') {
    if (placement.total === 0) return q.value >= 0 ? 1 : 0;
    return reportedProbability(emptiestTail(placement, weighted ? q.value : q.value / fair));
  }
  return reportedProbability(emptyShardsTail(placement, q.value));
}

const MAX_LEVELS = ['0.5', '0.9', '0.99', '0.999'];
const MIN_LEVELS = ['0.001', '0.01', '0.1', '0.5'];

export const oddsCommand: Command = {
  name: 'odds',
  summary: summaryOf('odds'),
  help: HELP,
  async run(argv, io) {
    const values = parseOptions(argv, {
      shards: { type: 'string' },
      'shard-map': { type: 'string' },
      requests: { type: 'string' },
      'max-at-least': { type: 'string', multiple: true },
      'min-at-most': { type: 'string', multiple: true },
      'empty-at-least': { type: 'string', multiple: true },
      json: { type: 'boolean' },
    });
    if (values.shards !== undefined && values['shard-map'] !== undefined) {
      throw new UsageError('--shard-map', values['shard-map'], 'cannot be combined with --shards');
    }
    if (values.requests === undefined) throw new UsageError('--requests', '', 'is required');
    const requests = wholeNumber('--requests', values.requests, 0);
    let placement: Placement;
    if (values['shard-map'] !== undefined) {
      const universe = await readShardMapFile(values['shard-map'], {
        maxShards: Number.MAX_SAFE_INTEGER,
      });
      placement = makePlacement(requests, universe.size, universe.shares);
    } else {
      if (values.shards === undefined)
        throw new UsageError('--shards', '', 'is required (or give --shard-map)');
      placement = makePlacement(requests, wholeNumber('--shards', values.shards, 1));
    }
    const weighted = placement.shares !== null;
    const queries = queriesInOrder(argv, weighted);
    const fair = requests / placement.shardCount;
    const scale = weighted ? 1 : fair;
    const maxQuantiles: Record<string, number> = {};
    for (const level of MAX_LEVELS)
      maxQuantiles[level] = round(fullestQuantile(placement, Number(level)) * scale, weighted);
    const minQuantiles: Record<string, number> = {};
    for (const level of MIN_LEVELS)
      minQuantiles[level] = round(emptiestQuantile(placement, Number(level)) * scale, weighted);
    const moments = emptyShardMoments(placement);
    const result = {
      shards: placement.shardCount,
      requests,
      null: weighted ? 'map' : 'uniform',
      max: { mean: fullestMean(placement) * scale, quantiles: maxQuantiles },
      min: { mean: emptiestMean(placement) * scale, quantiles: minQuantiles },
      empty: { mean: moments.mean, variance: moments.variance },
      answers: queries.map((q) => ({
        query: `${q.kind === 'max' ? 'max>=' : q.kind === 'min' ? 'min<=' : 'empty>='}${q.raw}`,
        probability: answer(placement, q),
      })),
    };
    if (values.json) {
      io.stdout.write(`${JSON.stringify(result)}\n`);
      return 0;
    }
    const unit = weighted ? 'relative load (x / (N p))' : 'requests';
    // Relative loads to four decimals (weighted quantiles are located to 1e-5 relative),
    // requests as whole counts, the means to one more place.
    const load = (value: number): string =>
      weighted ? value.toFixed(4) : Number.isInteger(value) ? String(value) : value.toFixed(1);
    let smallest = Infinity;
    let largest = 0;
    for (const share of placement.shares ?? []) {
      smallest = Math.min(smallest, share);
      largest = Math.max(largest, share);
    }
    const lines = [
      weighted
        ? `${requests} requests on ${placement.shardCount} shards, shares from the shard map (expected loads N p from ${formatNumber(requests * smallest)} to ${formatNumber(requests * largest)} requests)`
        : `${requests} requests on ${placement.shardCount} shards, equal shares (fair share ${formatNumber(fair)} requests)`,
      '',
      `fullest shard (${unit}): mean ${load(result.max.mean)}`,
      ...MAX_LEVELS.map(
        (l) => `  ${`${Number(l) * 100}%`.padStart(6)} quantile  ${load(maxQuantiles[l])}`,
      ),
      `emptiest shard (${unit}): mean ${load(result.min.mean)}`,
      ...MIN_LEVELS.map(
        (l) => `  ${`${Number(l) * 100}%`.padStart(6)} quantile  ${load(minQuantiles[l])}`,
      ),
      `empty shards: mean ${formatNumber(moments.mean)}, variance ${formatNumber(moments.variance)}`,
    ];
    if (result.answers.length > 0) {
      lines.push('', 'answers:');
      const width = Math.max(...result.answers.map((a) => a.query.length));
      for (const a of result.answers)
        lines.push(
          `  P(${a.query})${' '.repeat(width - a.query.length)} = ${formatNumber(a.probability, 10)}`,
        );
    }
    lines.push(
      '',
      'Under random placement (each request independently to a shard with its share).',
      '',
    );
    io.stdout.write(lines.join('\n'));
    return 0;
  },
};

function round(value: number, weighted: boolean): number {
  return weighted ? Number(value.toPrecision(10)) : Math.round(value);
}
