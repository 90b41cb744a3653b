import { describe, expect, it } from 'vitest';
import { quoteValue, UsageError } from '../../src/errors/usage-error.js';

describe('UsageError', () => {
  it('names the option and quotes the value', () => {
    const error = new UsageError('--window', '0s', 'is not a duration above zero');
    expect(error.message).toBe('--window: "0s" is not a duration above zero');
    expect(error.option).toBe('--window');
    expect(error.value).toBe('0s');
    expect(error.retriable).toBe(false);
    expect(error.name).toBe('UsageError');
    expect(error).toBeInstanceOf(Error);
  });

  it('keeps the message on one line for long or multi-line values', () => {
    const quoted = quoteValue(`${'x'.repeat(200)}\nmore`);
    expect(quoted.includes('\n')).toBe(false);
    // 120 characters kept, then "...", inside JSON quotes: 1 + 120 + 3 + 1.
    expect(quoted.length).toBe(125);
  });
});
