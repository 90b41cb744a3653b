import { ChanceMemo } from '../src/judge/chance-memo.js';
import { Judge } from '../src/judge/judge.js';
import { defaultJudgeSettings, type JudgeSettings } from '../src/judge/judge-settings.js';
import type { Judgement } from '../src/judge/judgement.js';
import type { ClosedWindow } from '../src/window/event-time-window.js';
import { ShardUniverse } from '../src/window/shard-universe.js';
import { MultinomialDraws } from './multinomial-draws.js';
import { OverdispersedDraws } from './overdispersed-draws.js';

/**
 * Calibration runs: simulated windows (exact multinomial draws) judged by the real Judge,
 * counted up. Shared by bench/calibration.bench.ts (the table) and
 * test/judge/calibration.test.ts (the same claims at reduced size, so CI guards them).
 */

const windowMs = 10_000;

/** The static rules of common practice, no source: alert when max / mean exceeds a limit. */
export const staticLimits = [1.5, 2.0] as const;

export interface RunSettings {
  readonly shards: number;
  /** N / m: requests per shard per window (N is rounded to a whole number). */
  readonly perShard: number;
  readonly windows: number;
  readonly seed: number;
  readonly judge?: Partial<JudgeSettings>;
}

/** Per-window rates under pure chance (equal shares, nothing planted). */
export interface ChanceRates {
  readonly windows: number;
  readonly hotspot: number;
  readonly cold: number;
  readonly uneven: number;
  /** Any of hotspot, cold, uneven. */
  readonly anyFinding: number;
  /** The fullest-shard test alone rejects (fullest p <= alpha, no practical floor). */
  readonly fullestTest: number;
  /** The spread test alone rejects (no practical floor on phi). */
  readonly spreadTest: number;
  readonly tooLittleTraffic: number;
  /** Incidents opened per window (all false). */
  readonly incidents: number;
  /** Windows where max / mean exceeds each of {@link staticLimits}. */
  readonly staticAlarms: readonly number[];
}

function judgeFor(
  shards: number,
  settings: Partial<JudgeSettings> | undefined,
  memo?: ChanceMemo,
  declaredWeights?: Float64Array,
): Judge {
  const universe =
    declaredWeights === undefined
      ? ShardUniverse.ofCount(shards)
      : ShardUniverse.fromWeights(
          Array.from({ length: shards }, (_, shard) => String(shard)),
          Array.from(declaredWeights),
        );
  return new Judge(universe, { ...defaultJudgeSettings, hopMs: windowMs, ...settings }, { memo });
}

function windowOf(index: number, counts: Float64Array, total: number): ClosedWindow {
  return {
    start: index * windowMs,
    end: (index + 1) * windowMs,
    counts,
    total,
    late: 0,
    rejected: {},
  };
}

function maxOverMean(counts: Float64Array, total: number): number {
  let max = 0;
  for (const count of counts) if (count > max) max = count;
  return total > 0 ? max / (total / counts.length) : 0;
}

/**
 * Windows of Multinomial(N, 1/m) judged with the given settings; every finding is a false
 * one. Several settings may judge the same draws (paired comparison), one rate set each.
 */
export function chanceRates(
  run: RunSettings,
  variants: readonly Partial<JudgeSettings>[],
): ChanceRates[] {
  const total = Math.round(run.shards * run.perShard);
  // One memo for all: the judges see the same totals, so they ask the same questions.
  const memo = new ChanceMemo(1 << 16);
  const judges = variants.map((variant) =>
    judgeFor(run.shards, { ...run.judge, ...variant }, memo),
  );
  const tallies = variants.map(() => ({
    hotspot: 0,
    cold: 0,
    uneven: 0,
    any: 0,
    little: 0,
    incidents: 0,
    fullestTest: 0,
    spreadTest: 0,
  }));
  const staticAlarms = staticLimits.map(() => 0);
  const draws = new MultinomialDraws(run.seed);
  for (let index = 0; index < run.windows; index++) {
    const counts = draws.draw(total, null, new Float64Array(run.shards));
    const ratio = maxOverMean(counts, total);
    staticLimits.forEach((limit, at) => {
      if (ratio > limit) staticAlarms[at]++;
    });
    judges.forEach((judge, at) => {
      const verdict = judge.judge(windowOf(index, counts, total));
      const tally = tallies[at];
      const has = (finding: string) => verdict.findings.includes(finding as never);
      if (has('hotspot')) tally.hotspot++;
      if (has('cold')) tally.cold++;
      if (has('uneven')) tally.uneven++;
      if (has('hotspot') || has('cold') || has('uneven')) tally.any++;
      if (has('too little traffic')) tally.little++;
      tally.incidents += verdict.opened.length;
      const alpha = judge.settings.alpha;
      if (verdict.fullest !== null && (verdict.fullest.p as number) <= alpha) tally.fullestTest++;
      if (verdict.spread.p <= alpha) tally.spreadTest++;
    });
  }
  return tallies.map((tally) => ({
    windows: run.windows,
    hotspot: tally.hotspot / run.windows,
    cold: tally.cold / run.windows,
    uneven: tally.uneven / run.windows,
    anyFinding: tally.any / run.windows,
    tooLittleTraffic: tally.little / run.windows,
    fullestTest: tally.fullestTest / run.windows,
    spreadTest: tally.spreadTest / run.windows,
    incidents: tally.incidents / run.windows,
    staticAlarms: staticAlarms.map((count) => count / run.windows),
  }));
}

/** A planted fault on shard 0: a hotspot of `factor` x its fair share, or a dead shard. */
export type Plant =
  { readonly kind: 'hotspot'; readonly factor: number } | { readonly kind: 'dead' };

export interface PowerSettings extends RunSettings {
  readonly plant: Plant;
  /** Windows per episode with the fault present (default 30), then `offWindows` without (default 10). */
  readonly onWindows?: number;
  readonly offWindows?: number;
}

export interface Power {
  /** Fault windows: the finding holds and the planted shard is flagged with it. */
  readonly detection: number;
  /** Fault windows where the window has the finding at all. */
  readonly finding: number;
  /** Episodes whose incident opened while the fault lasted. */
  readonly confirmed: number;
  /** Median windows from the fault's first window to its incident (episodes never confirmed count as never). */
  readonly medianWindowsToIncident: number;
  /** Fault windows where max / mean exceeds each static limit with the planted shard the maximum. */
  readonly staticHits: readonly number[];
  readonly faultWindows: number;
}

/**
 * Episodes of a planted fault on shard "0" (on for `onWindows`, off for `offWindows`, the
 * off stretch long enough for the incident to clear), judged by one judge throughout so
 * persistence runs as it would live.
 */
export function plantedPower(run: PowerSettings): Power {
  const onWindows = run.onWindows ?? 30;
  const offWindows = run.offWindows ?? 10;
  const m = run.shards;
  const total = Math.round(m * run.perShard);
  const faulty = new Float64Array(m);
  if (run.plant.kind === 'hotspot') {
    // The hot shard takes factor / m; the others share the rest equally (as sharesAt does).
    faulty[0] = run.plant.factor / m;
    faulty.fill((1 - faulty[0]) / (m - 1), 1);
  } else {
    faulty.fill(1 / (m - 1), 1);
  }
  const finding = run.plant.kind === 'hotspot' ? 'hotspot' : 'cold';
  const judge = judgeFor(m, run.judge);
  const draws = new MultinomialDraws(run.seed);
  const episodes = Math.max(1, Math.round(run.windows / onWindows));
  let detected = 0;
  let found = 0;
  let confirmed = 0;
  const staticHits = staticLimits.map(() => 0);
  const toIncident: number[] = [];
  let index = 0;
  for (let episode = 0; episode < episodes; episode++) {
    let openedAt = Infinity;
    for (let into = 0; into < onWindows + offWindows; into++) {
      const on = into < onWindows;
      const counts = draws.draw(total, on ? faulty : null, new Float64Array(m));
      const verdict: Judgement = judge.judge(windowOf(index++, counts, total));
      if (!on) continue;
      if (verdict.findings.includes(finding)) found++;
      if (
        verdict.findings.includes(finding) &&
        verdict.flagged.some((f) => f.shard === '0' && f.finding === finding)
      ) {
        detected++;
      }
      if (
        openedAt === Infinity &&
        verdict.incidents.some((i) => i.shard === '0' && i.finding === finding)
      ) {
        openedAt = into + 1;
      }
      if (run.plant.kind === 'hotspot') {
        let max = 0;
        for (const count of counts) if (count > max) max = count;
        const ratio = max / (total / m);
        staticLimits.forEach((limit, at) => {
          if (ratio > limit && counts[0] === max) staticHits[at]++;
        });
      }
    }
    if (openedAt !== Infinity) confirmed++;
    toIncident.push(openedAt);
  }
  toIncident.sort((a, b) => a - b);
  const faultWindows = episodes * onWindows;
  return {
    detection: detected / faultWindows,
    finding: found / faultWindows,
    confirmed: confirmed / episodes,
    medianWindowsToIncident: toIncident[Math.floor((toIncident.length - 1) / 2)],
    staticHits: staticHits.map((count) => count / faultWindows),
    faultWindows,
  };
}

export interface SpreadReport {
  readonly hotspot: number;
  readonly uneven: number;
  readonly chance: number;
  readonly meanFlagged: number;
  readonly medianPhi: number;
  readonly medianRobustPhi: number;
  readonly staticAlarms: readonly number[];
}

/**
 * Windows drawn with fixed unequal shares (`trafficShares`, e.g. Zipf-keyed traffic hashed
 * to shards) and judged against the declared shares (equal unless `declaredWeights`): what
 * a mode reports when the load is broadly uneven with nothing planted. The first `warmupWindows` are not counted
 * (a baseline learns there).
 */
export function unevenTrafficReport(
  run: RunSettings & {
    readonly trafficShares: Float64Array;
    readonly warmupWindows?: number;
    /** Declared shares (for the map null); absent: equal. */
    readonly declaredWeights?: Float64Array;
  },
): SpreadReport {
  const m = run.shards;
  const total = Math.round(m * run.perShard);
  const judge = judgeFor(m, run.judge, undefined, run.declaredWeights);
  const draws = new MultinomialDraws(run.seed);
  const warmup = run.warmupWindows ?? 0;
  let hotspot = 0;
  let uneven = 0;
  let chance = 0;
  let flagged = 0;
  const phis: number[] = [];
  const robustPhis: number[] = [];
  const staticAlarms = staticLimits.map(() => 0);
  for (let index = 0; index < warmup + run.windows; index++) {
    const counts = draws.draw(total, run.trafficShares, new Float64Array(m));
    const verdict = judge.judge(windowOf(index, counts, total));
    if (index < warmup) continue;
    if (verdict.findings.includes('hotspot')) hotspot++;
    if (verdict.findings.includes('uneven')) uneven++;
    if (verdict.findings.includes('chance')) chance++;
    flagged += verdict.flagged.length;
    phis.push(verdict.spread.phi);
    robustPhis.push(verdict.spread.robustPhi);
    const ratio = maxOverMean(counts, total);
    staticLimits.forEach((limit, at) => {
      if (ratio > limit) staticAlarms[at]++;
    });
  }
  const median = (values: number[]) => values.sort((a, b) => a - b)[Math.floor(values.length / 2)];
  return {
    hotspot: hotspot / run.windows,
    uneven: uneven / run.windows,
    chance: chance / run.windows,
    meanFlagged: flagged / run.windows,
    medianPhi: median(phis),
    medianRobustPhi: median(robustPhis),
    staticAlarms: staticAlarms.map((count) => count / run.windows),
  };
}

/** Monte Carlo standard error of a rate estimated from `windows` windows. */
export function standardError(rate: number, windows: number): number {
  return Math.sqrt((rate * (1 - rate)) / windows);
}

/** Over-dispersed traffic: independent negative binomial counts (variance phi x mean). */
export interface ClumpedRun extends RunSettings {
  /** Over-dispersion of every shard's counts (1: Poisson). */
  readonly phi: number;
  /** Windows judged before counting (the spread learns there). */
  readonly warmupWindows: number;
  /** Traffic shares (null: equal); the judge's null stays equal shares. */
  readonly trafficShares?: Float64Array | null;
  /** Level factor per window index (a slow drift of the traffic level); absent: 1. */
  readonly level?: (index: number) => number;
  /** A planted hotspot on shard 0 through the whole run: factor x its share. */
  readonly hotFactor?: number;
}

export interface ClumpedRates {
  readonly windows: number;
  readonly hotspot: number;
  readonly cold: number;
  readonly uneven: number;
  readonly tooLittleTraffic: number;
  /** Windows whose notes call the traffic lumpy (plenty of it, but clumped). */
  readonly lumpy: number;
  /** With a planted hotspot: windows with the finding and shard 0 flagged. */
  readonly detection: number;
  /** Shards flagged hot per window (beside shard 0 when one is planted). */
  readonly otherHot: number;
  readonly staticAlarms: readonly number[];
  readonly medianLearnedPhi: number;
}

/**
 * Windows of over-dispersed counts (OverdispersedDraws: gamma-Poisson per shard) judged
 * against equal shares after a warm-up; every finding is false unless a hotspot is planted.
 */
export function clumpedRates(run: ClumpedRun): ClumpedRates {
  const m = run.shards;
  const judge = judgeFor(m, run.judge);
  const draws = new OverdispersedDraws(run.seed);
  let shares: Float64Array | null = run.trafficShares ?? null;
  if (run.hotFactor !== undefined) {
    // Shard 0 takes factor x its share; the others share the rest in proportion (as plantedPower).
    const base = shares ?? new Float64Array(m).fill(1 / m);
    const hot = base[0] * run.hotFactor;
    const rest = (1 - hot) / (1 - base[0]);
    shares = base.map((share, shard) => (shard === 0 ? hot : share * rest));
  }
  const tally = { hotspot: 0, cold: 0, uneven: 0, little: 0, lumpy: 0, detected: 0, other: 0 };
  const staticAlarms = staticLimits.map(() => 0);
  const phis: number[] = [];
  for (let index = 0; index < run.warmupWindows + run.windows; index++) {
    const counts = new Float64Array(m);
    const mean = m * run.perShard * (run.level?.(index) ?? 1);
    const total = draws.draw(mean, shares, run.phi, counts);
    const verdict = judge.judge(windowOf(index, counts, total));
    if (index < run.warmupWindows) continue;
    const has = (finding: string) => verdict.findings.includes(finding as never);
    if (has('hotspot')) tally.hotspot++;
    if (has('cold')) tally.cold++;
    if (has('uneven')) tally.uneven++;
    if (has('too little traffic')) tally.little++;
    if (verdict.notes.some((note) => note.startsWith('lumpy traffic'))) tally.lumpy++;
    if (has('hotspot') && verdict.flagged.some((f) => f.shard === '0' && f.finding === 'hotspot'))
      tally.detected++;
    tally.other += verdict.flagged.filter((f) => f.finding === 'hotspot' && f.shard !== '0').length;
    phis.push(verdict.spread.learned?.phi ?? verdict.spread.robustPhi);
    const ratio = maxOverMean(counts, total);
    staticLimits.forEach((limit, at) => {
      if (ratio > limit) staticAlarms[at]++;
    });
  }
  phis.sort((a, b) => a - b);
  return {
    windows: run.windows,
    hotspot: tally.hotspot / run.windows,
    cold: tally.cold / run.windows,
    uneven: tally.uneven / run.windows,
    tooLittleTraffic: tally.little / run.windows,
    lumpy: tally.lumpy / run.windows,
    detection: tally.detected / run.windows,
    otherHot: tally.other / run.windows,
    staticAlarms: staticAlarms.map((count) => count / run.windows),
    medianLearnedPhi: phis[Math.floor(phis.length / 2)],
  };
}
