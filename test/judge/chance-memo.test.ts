import { describe, expect, it } from 'vitest';
import { makePlacement } from '../../src/chance/placement.js';
import { emptiestQuantile, fullestQuantile } from '../../src/chance/shard-extremes.js';
import { ChanceMemo } from '../../src/judge/chance-memo.js';

describe('ChanceMemo ceilings and floors across windows', () => {
  it('answers between known totals from the monotone ladder exactly as the engine searches', () => {
    // Totals of steady traffic on 64 shards: about 64 000 a window with the Poisson spread of
    // such a total (sd about 253), seeded draws (invented for the test). Ground truth: the engine's own quantile search on each total, checked against
    // python-flint references in test/chance/shard-extremes.test.ts.
    const memo = new ChanceMemo();
    const alpha = 0.001;
    let seed = 11;
    const uniform = () => (seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648;
    let afterWarmUp = 0;
    for (let window = 0; window < 160; window++) {
      if (window === 60) afterWarmUp = memo.ladderAnswers;
      const z = Math.sqrt(-2 * Math.log(1 - uniform())) * Math.cos(2 * Math.PI * uniform());
      const total = Math.round(64_000 + 253 * z);
      const placement = makePlacement(total, 64);
      expect(memo.ceiling(placement, 'equal', alpha)).toBe(fullestQuantile(placement, 1 - alpha));
      expect(memo.floor(placement, 'equal', alpha)).toBe(emptiestQuantile(placement, alpha));
    }
    // After 60 windows most questions come from the ladder (none of whose answers differed).
    expect(memo.ladderAnswers - afterWarmUp).toBeGreaterThan(100);
  });
});
