import { describe, expect, it } from 'vitest';
import { sweepCuts } from '../../../src/chance/share-sweep/cut-sums.js';
import { referenceSweep, relativeGap, sweepTotal } from './sweep-shares.js';

// mpmath 1.3.0 (40 digits) via test/chance/reference/make-sweep-sums-reference.py: each
// shard's Poisson(N p_i) cut below its threshold (side high) or above it (side low), its log
// mass, tail and first six cumulants from its raw moments, summed. Held to a relative 1e-8,
// the check of the method's loosest step (cells against their interpolant, sorted-shares.ts).
const tolerance = 1e-8;

const reference = {
  high: {
    relative: 1.25,
    logMassSum: -0.053954730450279635931,
    tailSum: 0.053941990328664203595,
    cumulants: [
      199997.11699060026362, 199852.23923462558971, 192764.64002365532099, -137073.69276499871506,
      -14678192.681284629905, -619762080.33048805404,
    ],
  },
  low: {
    relative: 0.8,
    logMassSum: -0.30603285853625775614,
    tailSum: 0.30571818145579890254,
    cumulants: [
      200013.88514519054512, 199406.57236455811738, 223742.61576647267563, -682671.31449901661571,
      30365890.944773878482, -925901968.5364415202,
    ],
  },
} as const;

describe('sweepCuts', () => {
  it.each(['high', 'low'] as const)(
    'side %s at Levin’s rate N: log mass, tail sum and six cumulants of the cut laws',
    (side) => {
      const expected = reference[side];
      const sums = sweepCuts(side, referenceSweep(), expected.relative, sweepTotal);
      expect(sums).not.toBeNull();
      const { logMassSum, tailSum, cumulants, empty } = sums as NonNullable<typeof sums>;
      expect(empty).toBe(false);
      expect(relativeGap(logMassSum, expected.logMassSum)).toBeLessThanOrEqual(tolerance);
      expect(relativeGap(tailSum, expected.tailSum)).toBeLessThanOrEqual(tolerance);
      expected.cumulants.forEach((value, r) =>
        expect(relativeGap(cumulants[r], value), `kappa_${r + 1}`).toBeLessThanOrEqual(tolerance),
      );
    },
  );
});
