import { describe, expect, it } from 'vitest';
import { chanceCacheOr } from '../../src/chance/chance-cache.js';
import { makePlacement } from '../../src/chance/placement.js';
import { emptiestQuantile, fullestQuantile } from '../../src/chance/shard-extremes.js';
import { ChanceMemo } from '../../src/judge/chance-memo.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

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

describe("ChanceMemo owns the chance engine's kept work", () => {
  // 600 shards with hash ranges 1 : 2 : 3 repeating (invented), so the engine sweeps them.
  const ids = Array.from({ length: 600 }, (_, shard) => `s${shard}`);
  const weights = ids.map((_, shard) => 1 + (shard % 3));

  function judgeWindows(judge: Judge, windows: number): void {
    for (let index = 0; index < windows; index++) {
      // About 100 requests a unit of weight, a hot shard now and then (invented).
      const counts = Float64Array.from(weights, (w, shard) => 100 * w + ((shard * 7 + index) % 13));
      if (index % 3 === 1) counts[5] *= 2;
      const start = index * 10_000;
      judge.judge({
        start,
        end: start + 10_000,
        counts,
        total: counts.reduce((sum, count) => sum + count, 0),
        late: 0,
        rejected: {},
      });
    }
  }

  it("a judge's questions go to its memo's cache: one sweep of its shares, none in the default", () => {
    const memo = new ChanceMemo();
    const judge = new Judge(
      ShardUniverse.fromWeights(ids, weights),
      { ...defaultJudgeSettings, null: 'map', hopMs: 10_000 },
      { memo },
    );
    const defaultBuilt = chanceCacheOr(undefined).sweepsBuilt;
    judgeWindows(judge, 4);
    // The declared shares are sorted once; every later total reuses them.
    expect(memo.cache.sweepsBuilt).toBe(1);
    expect(chanceCacheOr(undefined).sweepsBuilt).toBe(defaultBuilt);
  });

  it('numbers universes per memo: judges sharing it agree, other universes differ', () => {
    const memo = new ChanceMemo();
    const first = ShardUniverse.fromWeights(ids, weights);
    const second = ShardUniverse.fromWeights(ids, weights);
    expect(memo.universeKey(first)).toBe(memo.universeKey(first));
    expect(memo.universeKey(second)).not.toBe(memo.universeKey(first));
    // Two judges of one universe on one memo ask the same questions: the second's are answered
    // from the first's memo entries, so no further sweep is built.
    const settings = { ...defaultJudgeSettings, null: 'map' as const, hopMs: 10_000 };
    judgeWindows(new Judge(first, settings, { memo }), 2);
    const built = memo.cache.sweepsBuilt;
    judgeWindows(new Judge(first, settings, { memo }), 2);
    expect(memo.cache.sweepsBuilt).toBe(built);
  });
});
