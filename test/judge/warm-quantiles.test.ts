import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { makePlacement } from '../../src/chance/placement.js';
import { emptiestQuantile, fullestQuantile } from '../../src/chance/shard-extremes.js';
import { warmCeiling, warmFloor } from '../../src/judge/warm-quantiles.js';

// The chance engine's quantiles are the reference: a warm start may change the search
// path, never the answer (compared for exact equality).

describe('warm-started chance ceiling and floor', () => {
  it('match the engine at the examples in their comments', () => {
    const placement = makePlacement(64_000, 64);
    expect(warmCeiling(placement, 0.001, 1130)).toBe(fullestQuantile(placement, 0.999));
    expect(warmCeiling(placement, 0.001, 1130) * 1000).toBeCloseTo(1133, 9);
    expect(warmFloor(placement, 0.001, 870)).toBe(emptiestQuantile(placement, 0.001));
    expect(warmFloor(placement, 0.001, 870) * 1000).toBeCloseTo(872, 9);
  });

  it('equal the engine for any total, shard count, alpha and guess', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 200 }),
        fc.double({ min: 0.05, max: 300, noNaN: true }),
        fc.constantFrom(0.05, 0.01, 0.001, 1e-6),
        fc.oneof(fc.constant(Number.NaN), fc.double({ min: -50, max: 2, noNaN: true })),
        (shards, perShard, alpha, guessOffset) => {
          const total = Math.max(1, Math.round(shards * perShard));
          const placement = makePlacement(total, shards);
          const fair = total / shards;
          const ceiling = fullestQuantile(placement, 1 - alpha);
          const floor = emptiestQuantile(placement, alpha);
          // Guesses from far below to well above the answer, or none.
          const guess = (answer: number) =>
            Number.isNaN(guessOffset)
              ? Number.NaN
              : answer * fair * (1 + guessOffset / 10) + guessOffset;
          expect(warmCeiling(placement, alpha, guess(ceiling))).toBe(ceiling);
          expect(warmFloor(placement, alpha, guess(floor))).toBe(floor);
        },
      ),
      { numRuns: 150 },
    );
  });
});
