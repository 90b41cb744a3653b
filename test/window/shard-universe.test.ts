import { describe, expect, it } from 'vitest';
import { UsageError } from '../../src/errors/usage-error.js';
import {
  defaultMaxShards,
  outsideUniverse,
  ShardUniverse,
  tooManyShards,
} from '../../src/window/shard-universe.js';

function usageMessage(build: () => unknown): string {
  try {
    build();
  } catch (error) {
    expect(error).toBeInstanceOf(UsageError);
    return (error as UsageError).message;
  }
  throw new Error('expected a UsageError');
}

describe('ShardUniverse.fromShardsOption', () => {
  it('reads a count as ids 0..n-1 with equal shares', () => {
    // Expected ids and shares from docs/formats.md: `--shards 64` means ids 0..63, p_i = 1/64.
    const universe = ShardUniverse.fromShardsOption('64');
    expect(universe.declared).toBe(true);
    expect(universe.size).toBe(64);
    expect(universe.idAt(0)).toBe('0');
    expect(universe.idAt(63)).toBe('63');
    expect(universe.indexOf('17')).toBe(17);
    expect(universe.indexOf('64')).toBe(-1);
    expect([...universe.shares].every((share) => share === 1 / 64)).toBe(true);
  });

  it('reads a prefix range', () => {
    // Worked by hand: s-0..s-63 lists s-0, s-1, ..., s-63 (64 ids).
    const universe = ShardUniverse.fromShardsOption('s-0..s-63');
    expect(universe.size).toBe(64);
    expect(universe.ids.slice(0, 3)).toEqual(['s-0', 's-1', 's-2']);
    expect(universe.idAt(63)).toBe('s-63');
    expect(universe.indexOf('s-10')).toBe(10);
  });

  it('keeps the zero padding of a padded range', () => {
    // Worked by hand: node-001..node-128 is 128 ids, all three digits wide.
    const universe = ShardUniverse.fromShardsOption('node-001..node-128');
    expect(universe.size).toBe(128);
    expect(universe.idAt(0)).toBe('node-001');
    expect(universe.idAt(8)).toBe('node-009');
    expect(universe.idAt(127)).toBe('node-128');
    expect(universe.indexOf('node-1')).toBe(-1);
  });

  it('reads a prefix that ends in digits before the separator', () => {
    // Worked by hand: the shard number is the last run of digits, so v2-5..v2-7 is v2-5, v2-6, v2-7.
    expect(ShardUniverse.fromShardsOption('v2-5..v2-7').ids).toEqual(['v2-5', 'v2-6', 'v2-7']);
  });

  it('reads a comma-separated list in order', () => {
    expect(ShardUniverse.fromShardsOption('alpha, beta,gamma').ids).toEqual([
      'alpha',
      'beta',
      'gamma',
    ]);
  });

  it('rejects bad values with a message naming the option and the value', () => {
    // The wording is the project's usage-error form: option, quoted value, problem.
    expect(usageMessage(() => ShardUniverse.fromShardsOption('0'))).toBe(
      '--shards: "0" is not a positive whole number',
    );
    expect(usageMessage(() => ShardUniverse.fromShardsOption('abc'))).toBe(
      '--shards: "abc" is not a shard count (64), a range (s-0..s-63) or a list (a,b,c)',
    );
    expect(usageMessage(() => ShardUniverse.fromShardsOption('a-0..b-9'))).toContain(
      'different prefixes "a-" and "b-"',
    );
    expect(usageMessage(() => ShardUniverse.fromShardsOption('s-9..s-1'))).toBe(
      '--shards: "s-9..s-1" runs backwards',
    );
    expect(usageMessage(() => ShardUniverse.fromShardsOption('n-01..n-100'))).toContain(
      'pads its ends to different widths',
    );
    expect(usageMessage(() => ShardUniverse.fromShardsOption('a,b,a'))).toContain(
      'lists shard "a" twice',
    );
    expect(usageMessage(() => ShardUniverse.fromShardsOption('a,,b'))).toContain(
      'has an empty shard id',
    );
  });

  it('enforces --max-shards on declared universes', () => {
    expect(usageMessage(() => ShardUniverse.fromShardsOption('11', { maxShards: 10 }))).toBe(
      '--shards: "11" is more than --max-shards 10',
    );
    expect(usageMessage(() => ShardUniverse.fromShardsOption('s-0..s-10', { maxShards: 10 }))).toBe(
      '--shards: "s-0..s-10" declares 11 shards, more than --max-shards 10',
    );
    expect(usageMessage(() => ShardUniverse.fromShardsOption('4', { maxShards: 0 }))).toBe(
      '--max-shards: "0" is not a positive whole number',
    );
    // Default from docs/formats.md: 100000.
    expect(defaultMaxShards).toBe(100_000);
    expect(ShardUniverse.fromShardsOption('100000').size).toBe(100_000);
    expect(() => ShardUniverse.fromShardsOption('100001')).toThrow(UsageError);
  });
});

describe('ShardUniverse.fromShardMap', () => {
  it('turns CSV weights into shares over their sum', () => {
    // Worked by hand: weights 1, 3 sum to 4, so shares 0.25 and 0.75.
    const universe = ShardUniverse.fromShardMap('shard,weight\ns-a,1\ns-b,3\n', 'map.csv');
    expect(universe.declared).toBe(true);
    expect(universe.ids).toEqual(['s-a', 's-b']);
    expect([...universe.shares]).toEqual([0.25, 0.75]);
  });

  it('turns JSON weights into shares and keeps the file order', () => {
    // JSON.parse would list "10" before "9"; the file order is 9, 10, s-x. Shares 2/8, 4/8, 2/8.
    const universe = ShardUniverse.fromShardMap('{"9": 2, "10": 4, "s-x": 2}', 'map.json');
    expect(universe.ids).toEqual(['9', '10', 's-x']);
    expect([...universe.shares]).toEqual([0.25, 0.5, 0.25]);
  });

  it('has shares that sum to 1 for many uneven weights', () => {
    const lines = ['shard,weight'];
    for (let index = 0; index < 1000; index++) lines.push(`s-${index},${(index % 7) + 0.5}`);
    const shares = ShardUniverse.fromShardMap(lines.join('\n'), 'big.csv').shares;
    // Tolerance: 1000 additions of doubles, rounding error well under 1e-12.
    expect(Math.abs(shares.reduce((sum, share) => sum + share, 0) - 1)).toBeLessThan(1e-12);
  });
});

describe('a growing universe', () => {
  it('admits ids as they arrive, with equal shares of the current size', () => {
    const universe = ShardUniverse.growing();
    expect(universe.declared).toBe(false);
    expect(universe.admit('b')).toBe(0);
    expect(universe.admit('a')).toBe(1);
    expect(universe.admit('b')).toBe(0);
    expect(universe.size).toBe(2);
    expect([...universe.shares]).toEqual([0.5, 0.5]);
    universe.admit('c');
    expect([...universe.shares]).toEqual([1 / 3, 1 / 3, 1 / 3]);
  });

  it('stops growing at maxShards', () => {
    const universe = ShardUniverse.growing({ maxShards: 2 });
    universe.admit('x');
    universe.admit('y');
    expect(universe.admit('z')).toBe(tooManyShards);
    expect(universe.admit('x')).toBe(0);
    expect(universe.size).toBe(2);
  });

  it('never grows a declared universe', () => {
    const universe = ShardUniverse.fromShardsOption('3');
    expect(universe.admit('3')).toBe(outsideUniverse);
    expect(universe.size).toBe(3);
  });
});

describe('ShardUniverse.fromWeights', () => {
  it('rejects a weight that is not above zero', () => {
    expect(() => ShardUniverse.fromWeights(['a', 'b'], [1, 0])).toThrow(/weight 0, not above zero/);
    expect(() => ShardUniverse.fromWeights(['a', 'b'], [1])).toThrow(/2 shards but 1 weights/);
  });
});

describe('ShardUniverse.retire', () => {
  it('keeps the survivors in order under new indices and tells every listener the remap', () => {
    // Worked by hand: a b c d e, retiring b and d, leaves a c e at 0 1 2.
    const universe = ShardUniverse.growing();
    for (const id of ['a', 'b', 'c', 'd', 'e']) universe.admit(id);
    const before = universe.ids;
    const heard: number[][] = [];
    universe.onRetire((remap) => heard.push(Array.from(remap.indexAfter)));
    const remap = universe.retire((index) => index % 2 === 0);
    expect(remap?.retired).toBe(2);
    expect(remap?.previousIds).toBe(before);
    expect(heard).toEqual([[0, -1, 1, -1, 2]]);
    expect(universe.ids).toEqual(['a', 'c', 'e']);
    // A fresh array: a reader holding the old one still sees its own window's ids.
    expect(universe.ids).not.toBe(before);
    expect(before).toEqual(['a', 'b', 'c', 'd', 'e']);
    expect([universe.indexOf('c'), universe.indexOf('b')]).toEqual([1, outsideUniverse]);
    expect(universe.shares).toEqual(new Float64Array([1 / 3, 1 / 3, 1 / 3]));
    expect([universe.retiredTotal, universe.layout]).toEqual([2, 1]);
    // A retired id that reports again is admitted afresh, at the end.
    expect(universe.admit('b')).toBe(3);
    expect(universe.retire(() => true)).toBeNull();
    expect(universe.layout).toBe(1);
  });

  it('makes room in a full universe, and refuses to retire shards of a declared one', () => {
    const universe = ShardUniverse.growing({ maxShards: 2 });
    universe.admit('a');
    universe.admit('b');
    expect(universe.admit('c')).toBe(tooManyShards);
    expect(universe.refusedFull).toBe(1);
    universe.retire((index) => index === 1);
    expect(universe.admit('c')).toBe(1);
    expect(() => ShardUniverse.ofCount(4).retire(() => false)).toThrow(/declared/);
  });
});
