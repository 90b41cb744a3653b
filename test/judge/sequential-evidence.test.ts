import { describe, expect, it } from 'vitest';
import { MultinomialDraws } from '../../bench/multinomial-draws.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import {
  cusumThreshold,
  leastNullRunLength,
  SequentialEvidence,
  siegmundNullRunLength,
} from '../../src/judge/sequential-evidence.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

/** Mean -drift and standard deviation of the binomial log-likelihood-ratio increment under the null (worked by hand from its definition). */
function nullIncrement(total: number, shards: number, excess: number) {
  const share = 1 / shards;
  const rest = Math.log1p(-(1 + excess) * share) - Math.log1p(-share);
  const perCount = Math.log1p(excess) - rest;
  return {
    drift: -(total * share * perCount + total * rest),
    sd: perCount * Math.sqrt(total * share * (1 - share)),
  };
}

/**
 * Run lengths of the CUSUM under random placement: m shards, `total` requests a window,
 * each shard restarted at 0 after its alarm (seeded multinomial draws). Mean and its
 * standard error (run lengths are independent renewals per shard).
 */
function simulateRunLength(shards: number, total: number, threshold: number, windows: number) {
  const draws = new MultinomialDraws(3);
  const cusum = new SequentialEvidence(0.2, 1);
  const counts = new Float64Array(shards);
  const restart = new Float64Array(shards);
  let runs = 0;
  let sum = 0;
  let sumOfSquares = 0;
  for (let window = 0; window < windows; window++) {
    draws.draw(total, null, counts);
    for (const flag of cusum.update(window, 1, counts, total, null, shards, threshold)) {
      const length = window + 1 - restart[flag.index];
      runs++;
      sum += length;
      sumOfSquares += length * length;
      restart[flag.index] = window + 1;
      cusum.forget(flag.index);
    }
  }
  const mean = sum / runs;
  return { mean, standardError: Math.sqrt((sumOfSquares / runs - mean * mean) / runs), runs };
}

describe("Siegmund's approximation of the null run length", () => {
  it('matches a worked example', () => {
    // Worked by hand: h 4, drift 0.5, sd 1: b = 4 + 1.166 = 5.166, (e^b - b - 1) / 0.5 = 338.09.
    expect(siegmundNullRunLength(4, 0.5, 1)).toBeCloseTo(338.093, 2);
  });

  it('has its least value over traffic near 5.02 e^h, at shift 2 / 1.166', () => {
    // Derived by hand: for large h the run length is e^(h + 1.166 s) / (s^2 / 2); its minimum
    // over s is at s = 2 / 1.166, worth e^h x 2 e^2 (1.166 / 2)^2 = 5.0229 e^h.
    const expected = 2 * Math.exp(2) * (1.166 / 2) ** 2;
    expect(leastNullRunLength(30) / Math.exp(30)).toBeCloseTo(expected, 6);
    expect(cusumThreshold(1e12)).toBeCloseTo(Math.log(1e12 / expected), 6);
  });

  // Reduced size: 8 shards, h = 4 (run lengths of a few hundred windows), 100 000 windows at
  // each of three traffic levels around the least run length (increment sd about 1, 1.7,
  // 2.8). Tolerance: 4 standard errors of the simulated mean, plus 8% for the approximation
  // itself, exact in form for normal increments only (ours are binomial counts on a
  // lattice of ln 1.2); our allowance, stated.
  it.each([200, 600, 1600])(
    'agrees with seeded multinomial draws at N = %i over 8 shards',
    (total) => {
      const threshold = 4;
      const { drift, sd } = nullIncrement(total, 8, 0.2);
      const derived = siegmundNullRunLength(threshold, drift, sd);
      const measured = simulateRunLength(8, total, threshold, 100_000);
      expect(measured.runs).toBeGreaterThan(1000);
      expect(Math.abs(measured.mean - derived)).toBeLessThanOrEqual(
        4 * measured.standardError + 0.08 * derived,
      );
      // The threshold rests on the least run length over traffic: never above the measured one.
      expect(leastNullRunLength(threshold)).toBeLessThanOrEqual(
        measured.mean + 4 * measured.standardError,
      );
    },
  );
});

/** Judges `windows` seeded multinomial windows of `total` requests over the shares (null: equal). */
function judgeDraws(
  judge: Judge,
  shards: number,
  total: number,
  shares: Float64Array | null,
  windows: number,
  seed: number,
  hopMs: number,
) {
  const draws = new MultinomialDraws(seed);
  return Array.from({ length: windows }, (_, window) => {
    const counts = draws.draw(total, shares, new Float64Array(shards));
    return judge.judge({
      start: window * hopMs,
      end: (window + 1) * hopMs,
      counts,
      total,
      late: 0,
      rejected: {},
    });
  });
}

describe('the CUSUM in the judge', () => {
  it('finds a persistent 1.2x shard at 100 requests per shard that single windows rarely flag', () => {
    // 64 shards, one with 1.2 / 64.2 of the traffic (1.196x its fair share), 6400 requests a
    // window, default settings. One window: the chance ceiling is about 1.45x here, so the
    // window test flags the shard in about 1% of windows and 3 in a row about never.
    // The CUSUM gains about 100 (1.2 ln 1.2 - 0.2) = 1.9 a window (the Kullback-Leibler
    // information, worked by hand) toward h = 23.3, so about 13 windows; bound: 40.
    const hopMs = 10_000;
    const shares = new Float64Array(64).fill(1 / 64.2);
    shares[5] = 1.2 / 64.2;
    let flaggedWindows = 0;
    let judged = 0;
    const found: number[] = [];
    for (let seed = 1; seed <= 10; seed++) {
      const judge = new Judge(ShardUniverse.ofCount(64), { ...defaultJudgeSettings, hopMs });
      const verdicts = judgeDraws(judge, 64, 6400, shares, 40, seed, hopMs);
      const opened = verdicts.findIndex((v) => v.opened.some((i) => i.shard === '5'));
      found.push(opened);
      for (const verdict of verdicts.slice(0, opened < 0 ? 40 : opened + 1)) {
        judged++;
        if (verdict.flagged.some((f) => f.shard === '5')) flaggedWindows++;
      }
      if (opened >= 0) {
        const incident = verdicts[opened].opened.find((i) => i.shard === '5');
        expect(incident?.test).toBe('cusum');
        expect(verdicts[opened].notes.join(' ')).toMatch(/accumulated across windows/);
      }
    }
    expect(found.every((window) => window >= 2)).toBe(true);
    expect(flaggedWindows / judged).toBeLessThan(0.05);
  });

  it('opens false incidents under random placement at the rate the verdict states', () => {
    // Reduced size: 8 shards, 600 requests a window, alpha 0.1 and --confirm 2 (h = 5.08), one
    // window a day so the per-day rate is per window; 40 000 seeded windows, about 400
    // incidents by chance.
    const hopMs = 86_400_000;
    const judge = new Judge(ShardUniverse.ofCount(8), {
      ...defaultJudgeSettings,
      alpha: 0.1,
      confirm: 2,
      hopMs,
    });
    const windows = 40_000;
    const verdicts = judgeDraws(judge, 8, 600, null, windows, 11, hopMs);
    const cusum = verdicts.flatMap((v) => v.opened).filter((i) => i.test === 'cusum').length;
    // The verdict's rate: the threshold is set to the window rule's, windows per day (1 here)
    // x alpha^confirm = 0.01, as the least run length over traffic (worked by hand).
    expect(verdicts[0].cusumFalseIncidentsPerDay).toBeCloseTo(0.01, 8);
    // At this traffic (increment sd 1.71, near the least run length's 1.715) Siegmund's
    // approximation gives 8 shards / ARL0 false incidents a window. Tolerance: 4 standard
    // errors of a Poisson count of incidents, plus the 8% allowed above for the
    // approximation, plus 2% for incidents open about 9 windows (a shard cannot reopen).
    const { drift, sd } = nullIncrement(600, 8, 0.2);
    const derived = 8 / siegmundNullRunLength(cusumThreshold(8 / 0.01), drift, sd);
    const measured = cusum / windows;
    expect(Math.abs(measured - derived)).toBeLessThanOrEqual(
      (4 * Math.sqrt(cusum)) / windows + 0.1 * derived,
    );
  });
});
