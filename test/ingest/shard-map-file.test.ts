import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { readShardMapFile } from '../../src/ingest/shard-map-file.js';
import { UsageError } from '../../src/errors/usage-error.js';

const directory = mkdtempSync(join(tmpdir(), 'shardwise-shard-map-'));
afterAll(() => rmSync(directory, { recursive: true, force: true }));

describe('readShardMapFile', () => {
  it('reads a CSV map into a declared universe', async () => {
    const path = join(directory, 'map.csv');
    writeFileSync(path, 'shard,weight\nseat-00,2\nseat-01,6\n');
    const universe = await readShardMapFile(path);
    // Worked by hand: weights 2 and 6 over their sum 8.
    expect([...universe.shares]).toEqual([0.25, 0.75]);
    expect(universe.declared).toBe(true);
  });

  it('names the option and path when the file cannot be read or holds a bad entry', async () => {
    const missing = join(directory, 'missing.json');
    await expect(readShardMapFile(missing)).rejects.toBeInstanceOf(UsageError);
    await expect(readShardMapFile(missing)).rejects.toThrow(
      `--shard-map: ${JSON.stringify(missing)} cannot be read (ENOENT`,
    );
    const bad = join(directory, 'bad.json');
    writeFileSync(bad, '{"seat-00": 0}');
    await expect(readShardMapFile(bad)).rejects.toThrow(
      `--shard-map: ${JSON.stringify(bad)} entry "seat-00": weight 0 must be above zero`,
    );
  });
});
