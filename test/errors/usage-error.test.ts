import { describe, expect, it } from 'vitest';
import { UsageError, quoteValue } from '../../src/errors/usage-error.js';
import { ShardwiseError } from '../../src/errors/shardwise-error.js';

describe('UsageError', () => {
  it('one line naming the option and the quoted value, never retriable', () => {
    const error = new UsageError('--shards', '-3', 'is not a positive whole number');
    expect(error.message).toBe('--shards: "-3" is not a positive whole number');
    expect(error).toBeInstanceOf(ShardwiseError);
    expect(error.name).toBe('UsageError');
    expect([error.option, error.value, error.retriable]).toEqual(['--shards', '-3', false]);
    const cause = new Error('ENOENT');
    expect(new UsageError('--shard-map', 'x.json', 'cannot be read', { cause }).cause).toBe(cause);
  });
});

describe('quoteValue', () => {
  it('JSON-quotes, so a newline or a quote stays visible on one line', () => {
    expect(quoteValue('a"b\nc')).toBe('"a\\"b\\nc"');
  });

  it('cuts a value longer than 120 characters, marking the cut', () => {
    expect(quoteValue('x'.repeat(120))).toBe(`"${'x'.repeat(120)}"`);
    expect(quoteValue('x'.repeat(500))).toBe(`"${'x'.repeat(120)}..."`);
  });
});
