import { readFile } from 'node:fs/promises';
import { UsageError } from '../errors/usage-error.js';
import { ShardUniverse, type UniverseOptions } from '../window/shard-universe.js';

/**
 * Reads `--shard-map FILE` into a declared universe with the map's shares.
 * An unreadable file is a {@link UsageError} naming the option and the path,
 * like a bad entry in it (see ShardUniverse.fromShardMap), because both are
 * fixed by correcting the command line, not by retrying.
 */
export async function readShardMapFile(
  path: string,
  options: UniverseOptions = {},
): Promise<ShardUniverse> {
  let content: string;
  try {
    content = await readFile(path, 'utf8');
  } catch (error) {
    throw new UsageError('--shard-map', path, `cannot be read (${(error as Error).message})`, {
      cause: error,
    });
  }
  return ShardUniverse.fromShardMap(content, path, options);
}
