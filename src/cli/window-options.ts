import { readShardMapFile } from '../ingest/shard-map-file.js';
import { defaultMaxAheadMs } from '../judge/judging-pipeline.js';
import { UsageError } from '../errors/usage-error.js';
import { ShardUniverse } from '../window/shard-universe.js';
import { duration, wholeNumber } from './option-values.js';

/**
 * The window and shard-universe options `watch` and `review` share (for records judged
 * afresh), read once so both commands accept and reject the same values with the same
 * messages.
 */

/** The parseArgs specs of the shard-universe and window options. */
export const windowOptionSpec = {
  shards: { type: 'string' },
  'shard-map': { type: 'string' },
  'max-shards': { type: 'string' },
  window: { type: 'string' },
  hop: { type: 'string' },
  lateness: { type: 'string' },
  'max-ahead': { type: 'string' },
} as const;

/** The window option values as parseArgs gives them. */
export interface WindowOptionValues {
  readonly window?: string;
  readonly hop?: string;
  readonly lateness?: string;
  readonly 'max-ahead'?: string;
  readonly 'max-shards'?: string;
}

/**
 * --window (default 10s), --hop (default the window; must divide it), --lateness (default
 * 2s), --max-ahead (default 1h), --max-shards.
 */
export function readWindowOptions(values: WindowOptionValues): {
  windowMs: number;
  hopMs: number;
  latenessMs: number;
  maxAheadMs: number;
  maxShards: number | undefined;
} {
  const windowMs = values.window === undefined ? 10_000 : duration('--window', values.window);
  const hopMs = values.hop === undefined ? windowMs : duration('--hop', values.hop);
  if (hopMs > windowMs || windowMs % hopMs !== 0) {
    throw new UsageError(
      '--hop',
      values.hop as string,
      `does not divide --window ${values.window ?? '10s'}`,
    );
  }
  const latenessMs =
    values.lateness === undefined
      ? 2_000
      : duration('--lateness', values.lateness, { allowZero: true });
  const maxAheadMs =
    values['max-ahead'] === undefined
      ? defaultMaxAheadMs
      : duration('--max-ahead', values['max-ahead']);
  const maxShards =
    values['max-shards'] === undefined
      ? undefined
      : wholeNumber('--max-shards', values['max-shards'], 1);
  return { windowMs, hopMs, latenessMs, maxAheadMs, maxShards };
}

/**
 * The universe from --shard-map FILE (unequal shares) or --shards (equal shares); without
 * either, a universe that grows as shards report, or none (null) when `byPartition` (the
 * source's partitions are the shards).
 */
export async function readUniverseOptions(
  values: { readonly shards?: string; readonly 'shard-map'?: string },
  options: { maxShards: number | undefined; byPartition: boolean },
): Promise<{ universe: ShardUniverse | null; sharesDeclared: boolean }> {
  if (values.shards !== undefined && values['shard-map'] !== undefined) {
    throw new UsageError(
      '--shards',
      values.shards,
      'cannot be combined with --shard-map (one universe at a time)',
    );
  }
  const maxShards = options.maxShards;
  if (values['shard-map'] !== undefined) {
    return {
      universe: await readShardMapFile(values['shard-map'], { maxShards }),
      sharesDeclared: true,
    };
  }
  if (values.shards !== undefined) {
    return {
      universe: ShardUniverse.fromShardsOption(values.shards, { maxShards }),
      sharesDeclared: false,
    };
  }
  if (options.byPartition) return { universe: null, sharesDeclared: false };
  return { universe: ShardUniverse.growing({ maxShards }), sharesDeclared: false };
}

/** The --max-ahead help lines `watch` and `review` share. */
export const maxAheadHelp = `  --max-ahead D           the future bound (default 1h): live, a record stamped
                          more than D after the wall clock is rejected as "too far
                          ahead"; a replay holds a record more than D ahead of its
                          partition's own progress until later records confirm the
                          jump (64 records, or records spanning a window), and
                          rejects it when the next record comes back within D`;
