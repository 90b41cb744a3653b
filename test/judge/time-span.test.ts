import { describe, expect, it } from 'vitest';
import { describeSpan } from '../../src/judge/time-span.js';

// Unit sizes are the SI second and the calendar's minute, hour and day (common practice);
// a year here is 365 days, as the function documents.
describe('describeSpan', () => {
  it.each([
    // The doc comment's examples.
    [266_400_000, '3 d 2 h'],
    [310_000, '5 min 10 s'],
    [750, '750 ms'],
    // Worked by hand: the two largest units, the second dropped when it is zero.
    [0, '0 ms'],
    [999.6, '1000 ms'],
    [1000, '1 s'],
    [59_999, '59 s'],
    [60_000, '1 min'],
    [3_600_000 + 59_000, '1 h'],
    [86_400_000 * 2 + 60_000, '2 d'],
    [365 * 86_400_000 + 86_400_000 * 40, '1 y 40 d'],
  ])('%d ms is %j', (ms, words) => {
    expect(describeSpan(ms)).toBe(words);
  });

  it('a span that is not a finite number is written as JavaScript writes it', () => {
    expect(describeSpan(Number.POSITIVE_INFINITY)).toBe('Infinity');
    expect(describeSpan(Number.NaN)).toBe('NaN');
  });
});
