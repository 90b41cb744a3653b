import { describe, expect, it } from 'vitest';
import { TableLookup, prepare } from '../../../src/chance/share-sweep/coefficient-table.js';
import { shareSweep, thresholdAt } from '../../../src/chance/share-sweep/sorted-shares.js';
import { logBinomialAtLeast, logBinomialAtMost } from '../../../src/chance/tails.js';
import { referenceSweep, relativeGap } from './sweep-shares.js';

// Table tails against tails.ts's exact per-shard binomial tails (checked against scipy in
// tails.test.ts), to the method's 1e-8 (cells against their interpolant, sorted-shares.ts).
describe('prepare and TableLookup', () => {
  it.each(['high', 'low'] as const)(
    'side %s: every shard’s tail from the table, in ascending share',
    (side) => {
      const sweep = referenceSweep();
      const relative = side === 'high' ? 1.25 : 0.8;
      const co = prepare({ side, law: { kind: 'binomial' }, sweep, relative }, false);
      expect(co).not.toBeNull();
      const table = co as NonNullable<typeof co>;
      expect(table.relative).toBe(relative);
      expect(table.reach).toBe(0.5);
      const lookup = new TableLookup(table, side);
      for (const share of sweep.shares) {
        const k = thresholdAt(side, relative * (sweep.total * share));
        if (k > table.last) break;
        const exact =
          side === 'high'
            ? logBinomialAtLeast(k, sweep.total, share)
            : logBinomialAtMost(k, sweep.total, share);
        const fromTable = lookup.binomialTail(k, share, sweep.total);
        expect(relativeGap(fromTable, Math.exp(exact - table.peak)), `k ${k}`).toBeLessThanOrEqual(
          1e-8,
        );
      }
    },
  );

  it('the count 1 on side high in closed form, 1 - (1 - p)^N', () => {
    // 600 shares of 1/1200, 2/1200, 3/1200 and N = 600 at 0.9x: positions 0.45, 0.9, 1.35, so
    // thresholds 1, 1, 2. P(X >= 1) = 1 - (1 - p)^N (common practice): at p = 1/1200,
    // 0.3935957579094052211 (mpmath, 30 digits; scipy binom.sf(0, 600, 1/1200) agrees). Held to
    // 1e-13: the closed form, then the e^-peak scaling and back.
    const weights = Array.from({ length: 600 }, (_, i) => 1 + (i % 3));
    const sweep = shareSweep({
      total: 600,
      shardCount: 600,
      shares: Float64Array.from(weights, (weight) => weight / 1200),
    });
    const co = prepare(
      { side: 'high', law: { kind: 'binomial' }, sweep: sweep!, relative: 0.9 },
      false,
    );
    expect(co?.one).toBe(true);
    const table = co as NonNullable<typeof co>;
    const tail = new TableLookup(table, 'high').binomialTail(1, 1 / 1200, 600);
    expect(relativeGap(tail * Math.exp(table.peak), 0.3935957579094052211)).toBeLessThanOrEqual(
      1e-13,
    );
  });

  it('a table for reuse serves nearby loads and is rebuilt for a far one', () => {
    const sweep = referenceSweep();
    const query = (relative: number) =>
      ({ side: 'high', law: { kind: 'binomial' }, sweep, relative }) as const;
    const kept = prepare(query(1.25), true);
    expect(kept).not.toBeNull();
    expect(kept?.reach).toBe(2);
    // 1e-4 away: offsets move by at most x_max 1e-4, well within the reach of 2.
    expect(prepare(query(1.2501), true)).toBe(kept);
    expect(prepare(query(1.6), true)).not.toBe(kept);
  });

  it('no table at load 0 on side high', () => {
    expect(
      prepare(
        { side: 'high', law: { kind: 'binomial' }, sweep: referenceSweep(), relative: 0 },
        false,
      ),
    ).toBeNull();
  });
});
