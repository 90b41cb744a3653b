import { describe, expect, it } from 'vitest';
import { readUniverseOptions, readWindowOptions } from '../../src/cli/window-options.js';
import { UsageError } from '../../src/errors/usage-error.js';

describe('readWindowOptions', () => {
  it('the documented defaults: 10 s windows, hop the window, 2 s lateness, 1 h ahead', () => {
    expect(readWindowOptions({})).toEqual({
      windowMs: 10_000,
      hopMs: 10_000,
      latenessMs: 2_000,
      maxAheadMs: 3_600_000,
      maxShards: undefined,
    });
  });

  it('reads each value in its unit', () => {
    expect(
      readWindowOptions({
        window: '1m',
        hop: '15s',
        lateness: '0',
        'max-ahead': '30m',
        'max-shards': '5000',
      }),
    ).toEqual({
      windowMs: 60_000,
      hopMs: 15_000,
      latenessMs: 0,
      maxAheadMs: 1_800_000,
      maxShards: 5000,
    });
  });

  it('a hop that does not divide the window is refused, naming both', () => {
    expect(() => readWindowOptions({ window: '10s', hop: '3s' })).toThrow(
      new UsageError('--hop', '3s', 'does not divide --window 10s'),
    );
    expect(() => readWindowOptions({ hop: '20s' })).toThrow(
      '--hop: "20s" does not divide --window 10s',
    );
  });

  it('bad durations name the option and the value', () => {
    expect(() => readWindowOptions({ window: '10 parsecs' })).toThrow(
      '--window: "10 parsecs" is not a duration (examples: 500ms, 10s, 5m, 1h)',
    );
    expect(() => readWindowOptions({ window: '0s' })).toThrow(
      '--window: "0s" must be a duration above zero',
    );
    expect(() => readWindowOptions({ lateness: '-1s' })).toThrow('--lateness: "-1s"');
  });
});

describe('readUniverseOptions', () => {
  it('--shards and --shard-map together are refused', async () => {
    await expect(
      readUniverseOptions(
        { shards: '8', 'shard-map': 'map.json' },
        { maxShards: undefined, byPartition: false },
      ),
    ).rejects.toThrow('--shards: "8" cannot be combined with --shard-map (one universe at a time)');
  });

  it('--shards gives equal declared shards; none gives a growing universe, or none by partition', async () => {
    const declared = await readUniverseOptions(
      { shards: 's-0..s-3' },
      { maxShards: undefined, byPartition: false },
    );
    expect(declared.sharesDeclared).toBe(false);
    expect(declared.universe?.size).toBe(4);
    expect(declared.universe?.idAt(3)).toBe('s-3');
    const growing = await readUniverseOptions({}, { maxShards: 10, byPartition: false });
    expect(growing.universe?.size).toBe(0);
    expect(await readUniverseOptions({}, { maxShards: undefined, byPartition: true })).toEqual({
      universe: null,
      sharesDeclared: false,
    });
  });
});
