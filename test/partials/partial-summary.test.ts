import { describe, expect, it } from 'vitest';
import {
  PartialSummaryError,
  decodePartialSummary,
  encodePartialSummary,
  type PartialSummary,
} from '../../src/partials/partial-summary.js';

// The format of the doc comment of partial-summary.ts, with values of our own.
const summary: PartialSummary = {
  partial: 1,
  instance: 'c0ffee-1',
  epoch: 2,
  topic: 'requests',
  sourcePartitions: 12,
  windowMs: 10_000,
  latenessMs: 2_000,
  shardFrom: 'field',
  start: 1764583200000,
  end: 1764583210000,
  parts: [
    { partition: 3, from: 120, to: 480, records: 55, late: 0, rejected: {}, counts: { 's-1': 4 } },
    { partition: 5, from: 7, to: 6, records: 0, late: 2, rejected: {}, counts: {} },
  ],
};

describe('encodePartialSummary and decodePartialSummary', () => {
  it('one JSON object in the documented shape, read back as it was', () => {
    const text = encodePartialSummary(summary);
    expect(text.startsWith('{"partial":1,"instance":"c0ffee-1","epoch":2,"topic":"requests"')).toBe(
      true,
    );
    expect(decodePartialSummary(text)).toEqual(summary);
  });

  it('a shard id from the wire is kept whatever it is, __proto__ included', () => {
    // JSON.parse makes "__proto__" an own property (ECMA-262, JSON.parse's internalize
    // step uses CreateDataProperty); assigning it to a plain object would set the prototype
    // instead and lose the count.
    const text = encodePartialSummary(summary).replace('{"s-1":4}', '{"__proto__":4,"s-1":2}');
    const part = decodePartialSummary(text).parts[0];
    expect(Object.entries(part.counts)).toEqual([
      ['__proto__', 4],
      ['s-1', 2],
    ]);
    expect(Object.getPrototypeOf(part.counts)).toBe(Object.prototype);
  });

  it.each([
    ['not JSON', 'not JSON'],
    ['[1]', 'not a JSON object'],
    [JSON.stringify({ ...summary, partial: 2 }), 'partial version 2 is not 1'],
    [JSON.stringify({ ...summary, instance: '' }), 'instance is not a non-empty string'],
    [JSON.stringify({ ...summary, epoch: -1 }), 'epoch is not a whole number of at least 0'],
    [
      JSON.stringify({ ...summary, end: summary.end + 1 }),
      'window 1764583200000..1764583210001 is not one aligned window of 10000 ms',
    ],
    [
      JSON.stringify({ ...summary, start: 1764583200001, end: 1764583210001 }),
      'window 1764583200001..1764583210001 is not one aligned window of 10000 ms',
    ],
    [JSON.stringify({ ...summary, parts: {} }), 'parts is not an array'],
    [
      JSON.stringify({ ...summary, parts: [summary.parts[0], summary.parts[0]] }),
      'partition 3 appears twice in one summary',
    ],
    [
      JSON.stringify({ ...summary, parts: [{ ...summary.parts[0], partition: 12 }] }),
      'partition 12 is outside the 12 partitions of the source',
    ],
    [
      JSON.stringify({ ...summary, parts: [{ ...summary.parts[0], from: 10, to: 8 }] }),
      'offset range 10..8 runs backwards',
    ],
    [
      JSON.stringify({ ...summary, parts: [{ ...summary.parts[0], counts: { a: 1.5 } }] }),
      'counts.a is not a non-negative whole number',
    ],
    [
      JSON.stringify({ ...summary, parts: [{ ...summary.parts[0], rejected: { gremlins: 1 } }] }),
      'rejection reason "gremlins" is not known',
    ],
  ])('refuses %s: %s', (text, problem) => {
    expect(() => decodePartialSummary(text)).toThrow(new PartialSummaryError(problem));
  });
});
