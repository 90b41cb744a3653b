import type { Placement } from '../chance/placement.js';
import type {
  KeyCause,
  KeyPlacementVerdict,
  KeyVerdict,
  ReplacementVerdict,
  ShardKeyEvidence,
  TopKey,
  WindowKeyAnalyst,
} from '../judge/key-verdict.js';
import type { FlaggedShard, Judgement, NullModelName } from '../judge/judgement.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import type { ShardUniverse } from '../window/shard-universe.js';
import {
  keyPlacementTest,
  shardKeyP,
  sketchMargin,
  type KeyPlacementResult,
} from './key-placement-test.js';
import { KeyedWindows } from './keyed-windows.js';
import { replacementTest } from './replacement-test.js';
import type { KeySketchSettings, WindowKeyStats } from './window-key-stats.js';

/** Settings of key analysis, from `watch`'s options. */
export interface KeyAnalysisSettings {
  readonly windowMs: number;
  readonly hopMs: number;
  readonly sketch: KeySketchSettings;
  /** `--key-simulations`: most re-placement simulations per window. */
  readonly simulations: number;
  /** Most key placements the re-placement test may make per window, summed over its simulations. */
  readonly maxWork?: number;
  /** The judge's alpha: the key placement test rejects at it. */
  readonly alpha: number;
  /** The judge's null model: `uniform` tests keys against equal shares, the others against the declared ones. */
  readonly null: NullModelName;
  readonly maxFlagged: number;
}

/**
 * A hot key must surely carry at least this share of its shard's excess: "most of the
 * excess", read as at least half. Our choice, stated in docs/keys.md.
 */
export const hotKeyShare = 0.5;
/**
 * The re-placement test counts as evidence of wrong placement when the upper end of its
 * 95% interval is below this level (it needs about 400 simulations without an exceedance).
 * A level for attribution only; findings keep the judge's alpha. Our choice.
 */
export const replacementLevel = 0.01;
/** Heavy keys the re-placement test places one by one at most; the rest join the light keys. */
export const mostHeavyKeys = 4096;
const defaultMaxWork = 20_000_000;
const shownTopKeys = 3;

/**
 * Hot keys versus placement (issue 8): per window and shard, heavy hitters (Space-Saving)
 * and distinct keys (exact, then HyperLogLog); the key placement test (distinct keys per
 * shard against K keys placed at random, the chance engine with balls = keys); the
 * re-placement test (the observed key weights placed at random, seeded Monte Carlo); and
 * one cause per hot shard: `hot key`, `placement` or `moved` (see KeyCause).
 *
 * Pure: no I/O, no clock. Memory: the open windows' statistics, at most
 * shardKeyMemoryBound(settings.sketch) per shard with keys and window. Per window: the key
 * placement test (two chance-engine tails), at most `simulations` re-placement runs capped
 * at `maxWork` key placements, and O(m + shards with keys x counters) besides.
 */
export class KeyAnalysis implements WindowKeyAnalyst {
  readonly settings: KeyAnalysisSettings;
  private readonly universe: ShardUniverse;
  private readonly windows: KeyedWindows;

  constructor(universe: ShardUniverse, settings: KeyAnalysisSettings) {
    this.universe = universe;
    this.settings = settings;
    this.windows = new KeyedWindows(settings.windowMs, settings.hopMs, settings.sketch);
    // Ids retire at a window boundary, before that window's verdict is asked for.
    if (!universe.declared) universe.onRetire((remap) => this.windows.follow(remap.indexAfter));
  }

  record(ts: number, shardIndex: number, key: string, count: number): void {
    this.windows.add(ts, shardIndex, key, count);
  }

  close(window: ClosedWindow): (judgement: Judgement) => KeyVerdict | null {
    const stats = this.windows.close(window.start);
    if (stats === null || stats.requests === 0) return () => null;
    return (judgement) => this.analyse(window, judgement, stats);
  }

  /** The key verdict of a judged window, closed and judged at once (see {@link close}). */
  verdict(window: ClosedWindow, judgement: Judgement): KeyVerdict | null {
    return this.close(window)(judgement);
  }

  /** Key statistics held for windows not yet closed. */
  get openWindows(): number {
    return this.windows.openWindows;
  }

  private analyse(window: ClosedWindow, judgement: Judgement, stats: WindowKeyStats): KeyVerdict {
    const s = this.settings;
    const m = window.counts.length;
    const shares = this.keyShares(m);
    const notes: string[] = [];
    if (s.null === 'baseline') {
      notes.push(
        'keys are tested against the declared shares (hash-range sizes), not the learned baseline',
      );
    }
    if (stats.requests < window.total) {
      notes.push(
        `${stats.requests} of ${window.total} requests carried a key; key evidence covers only those`,
      );
    }
    const distinct = new Float64Array(m);
    const exact: boolean[] = new Array<boolean>(m).fill(true);
    const keyedLoad = new Float64Array(m);
    let standardError = 0;
    let exactUpTo = 0;
    for (let index = 0; index < m; index++) {
      const shard = stats.shards[index];
      if (shard === undefined) continue;
      distinct[index] = shard.distinct.count;
      exact[index] = shard.distinct.exact;
      keyedLoad[index] = shard.requests;
      standardError = shard.distinct.standardError;
      exactUpTo = shard.distinct.exactUpTo;
    }
    const allExact = exact.every((value) => value);
    let distinctKeys = 0;
    for (let index = 0; index < m; index++) distinctKeys += distinct[index];

    const test = m >= 2 ? keyPlacementTest({ distinct, exact, standardError }, shares) : null;
    const placement = test === null ? null : this.placementVerdict(test);
    const keyPlacement: Placement | null =
      test === null ? null : { total: test.keys, shardCount: m, shares };

    const hot = judgement.flagged.filter((shard) => shard.finding === 'hotspot');
    const cold = judgement.flagged.filter((shard) => shard.finding === 'cold');
    const replacement =
      hot.length > 0 ? this.replacement(window, stats, keyedLoad, distinctKeys, shares) : null;

    const evidence: ShardKeyEvidence[] = [];
    const causes: KeyCause[] = [];
    const expectedKeys = (index: number) =>
      (test?.keys ?? distinctKeys) * (shares === null ? 1 / m : shares[index]);
    const keyP = (index: number, side: 'high' | 'low') =>
      keyPlacement === null
        ? 1
        : shardKeyP(
            distinct[index],
            expectedKeys(index),
            exact[index],
            standardError,
            keyPlacement,
            side,
          );
    for (const flagged of [...hot, ...cold].slice(0, s.maxFlagged)) {
      const index = this.universe.indexOf(flagged.shard);
      if (index < 0 || index >= m) continue;
      evidence.push({
        shard: flagged.shard,
        finding: flagged.finding,
        keyedRequests: keyedLoad[index],
        distinct: distinct[index],
        distinctExact: exact[index],
        distinctExpected: expectedKeys(index),
        distinctP: keyP(index, flagged.finding === 'hotspot' ? 'high' : 'low'),
        topKeys: stats.shards[index]?.heavy.top(shownTopKeys) ?? [],
      });
    }
    // A flagged shard's fair share from its own numbers; a dead one (relative load 0) from
    // the shares (exact for equal or declared shares, the declared ones under a baseline).
    const fairShare = (flagged: FlaggedShard) => {
      if (flagged.relative > 0) return flagged.count / flagged.relative;
      const index = this.universe.indexOf(flagged.shard);
      return judgement.requests * (shares === null ? 1 / m : shares[index]);
    };
    for (const flagged of hot) {
      const index = this.universe.indexOf(flagged.shard);
      if (index < 0 || index >= m) continue;
      causes.push(
        this.cause(
          flagged,
          index,
          cold,
          stats,
          distinct[index],
          expectedKeys(index),
          keyP(index, 'high'),
          replacement,
          fairShare,
        ),
      );
    }
    // Keys per shard off with no hot load (yet): a partitioner fault shows in the keys first.
    if (placement !== null && test !== null && test.fullest.p <= s.alpha) {
      const shard = this.universe.idAt(test.fullest.index);
      if (!causes.some((cause) => cause.shard === shard)) {
        const top = stats.shards[test.fullest.index]?.heavy.top(1)[0] ?? null;
        causes.push({
          shard,
          cause: 'placement',
          basis: 'keys per shard',
          excess: 0,
          topKey: top,
          topKeyShare: 0,
          topKeyShareAtMost: 0,
          distinct: test.fullest.keys,
          distinctExpected: test.fullest.expected,
          from: null,
          summary: `placement on ${shard}: ${keysText(test.fullest.keys, test.fullest.exact)} distinct keys, ${ratio(test.fullest.relative)} the ${round(test.fullest.expected)} random placement gives (p ${pText(test.fullest.p)}), though its load is not past the chance ceiling`,
        });
      }
    }
    if (!allExact) {
      notes.push(
        `distinct keys above ${exactUpTo} on a shard are HyperLogLog estimates (standard error ${percent(standardError)})`,
      );
    }
    return {
      keyedRequests: stats.requests,
      distinctKeys,
      distinctExact: allExact,
      sketch: {
        counters: s.sketch.counters,
        registers: s.sketch.registers,
        standardError: 1.04 / Math.sqrt(s.sketch.registers),
        exactUpTo: s.sketch.registers / 16,
      },
      placement,
      replacement,
      shards: evidence,
      causes,
      notes,
    };
  }

  private cause(
    flagged: FlaggedShard,
    index: number,
    cold: readonly FlaggedShard[],
    stats: WindowKeyStats,
    distinct: number,
    distinctExpected: number,
    distinctP: number,
    replacement: ReplacementVerdict | null,
    fairShare: (shard: FlaggedShard) => number,
  ): KeyCause {
    const fair = flagged.relative > 0 ? flagged.count / flagged.relative : 0;
    const excess = Math.max(0, flagged.count - fair);
    const top: TopKey | null = stats.shards[index]?.heavy.top(1)[0] ?? null;
    const share = (requests: number) =>
      excess > 0 ? Math.min(1, Math.max(0, requests) / excess) : 0;
    const topKeyShare = top === null ? 0 : share(top.count - top.overestimate);
    const topKeyShareAtMost = top === null ? 0 : share(top.count);
    const base = {
      shard: flagged.shard,
      excess,
      topKey: top,
      topKeyShare,
      topKeyShareAtMost,
      distinct,
      distinctExpected,
    };
    const exactKeys = stats.shards[index]?.distinct.exact ?? true;
    const topText =
      top === null
        ? 'no key seen'
        : `top key ${JSON.stringify(top.key)} carries at most ${percent(topKeyShareAtMost)} of it`;
    if (top !== null && topKeyShare >= hotKeyShare) {
      return {
        ...base,
        cause: 'hot key',
        basis: 'one key',
        from: null,
        summary: `hot key ${JSON.stringify(top.key)} on ${flagged.shard}: at least ${percent(topKeyShare)} of the ${round(excess)} requests above the fair share (${round(top.count)} requests, at most ${round(top.overestimate)} overcounted)`,
      };
    }
    if (cold.length > 0) {
      const deficits = cold.map((shard) => ({
        shard: shard.shard,
        deficit: Math.max(0, fairShare(shard) - shard.count),
      }));
      deficits.sort((a, b) => b.deficit - a.deficit);
      const from = deficits[0];
      return {
        ...base,
        cause: 'moved',
        basis: 'cold shard',
        from,
        summary: `moved from ${from.shard} to ${flagged.shard}: ${from.shard} lacks ${round(from.deficit)} requests, ${flagged.shard} carries ${round(excess)} above its fair share with ${ratio(distinct / Math.max(distinctExpected, 1e-300))} the distinct keys expected; ${topText}`,
      };
    }
    if (distinctP <= this.settings.alpha) {
      return {
        ...base,
        cause: 'placement',
        basis: 'keys per shard',
        from: null,
        summary: `placement on ${flagged.shard}: ${keysText(distinct, exactKeys)} distinct keys, ${ratio(distinct / Math.max(distinctExpected, 1e-300))} the ${round(distinctExpected)} random placement gives (p ${pText(distinctP)}); ${topText} (${round(excess)} requests)`,
      };
    }
    const unlikely = replacement !== null && replacement.high < replacementLevel;
    const odds =
      replacement === null
        ? 'no re-placement test'
        : `these key weights placed at random reach this load with p ${pText(replacement.p)} (95% ${pText(replacement.low)}-${pText(replacement.high)}, ${replacement.simulations} runs)`;
    return {
      ...base,
      cause: 'placement',
      basis: unlikely ? 'weights' : 'heavy keys together',
      from: null,
      summary: unlikely
        ? `placement on ${flagged.shard}: the excess of ${round(excess)} requests is spread over many keys; ${odds}; ${topText}`
        : `placement on ${flagged.shard}: several heavy keys share it; ${odds}; ${topText} (${round(excess)} requests)`,
    };
  }

  private replacement(
    window: ClosedWindow,
    stats: WindowKeyStats,
    keyedLoad: Float64Array,
    distinctKeys: number,
    shares: Float64Array | null,
  ): ReplacementVerdict | null {
    const m = keyedLoad.length;
    const weights: number[] = [];
    for (const shard of stats.shards) {
      if (shard === undefined) continue;
      for (const hitter of shard.heavy.top()) {
        const surely = hitter.count - hitter.overestimate;
        if (surely > 0) weights.push(surely);
      }
    }
    weights.sort((a, b) => b - a);
    const heavy = Float64Array.from(weights.slice(0, mostHeavyKeys));
    let heavyRequests = 0;
    for (const weight of heavy) heavyRequests += weight;
    const lightRequests = Math.max(0, stats.requests - heavyRequests);
    let lightKeys = Math.max(0, Math.round(distinctKeys) - heavy.length);
    if (lightRequests > 0 && lightKeys === 0) lightKeys = 1;
    let observed = 0;
    for (let index = 0; index < m; index++) {
      const share = shares === null ? 1 / m : shares[index];
      if (share > 0) observed = Math.max(observed, keyedLoad[index] / (stats.requests * share));
    }
    const result = replacementTest({
      heavy,
      lightRequests: lightKeys > 0 ? lightRequests : 0,
      lightKeys,
      shares,
      shardCount: m,
      observed,
      maxSimulations: this.settings.simulations,
      maxWork: this.settings.maxWork ?? defaultMaxWork,
      seed: (Math.floor(window.start / this.settings.hopMs) ^ 0x6b657973) >>> 0,
    });
    return {
      observed,
      p: result.p,
      low: result.low,
      high: result.high,
      confidence: result.confidence,
      simulations: result.simulations,
      exceeded: result.exceeded,
      heavyKeys: heavy.length,
      lightKeys,
      lightRequests,
      seed: result.seed,
    };
  }

  private placementVerdict(test: KeyPlacementResult): KeyPlacementVerdict {
    const side = (extreme: KeyPlacementResult['fullest']) => ({
      shard: this.universe.idAt(extreme.index),
      keys: extreme.keys,
      exact: extreme.exact,
      expected: extreme.expected,
      relative: extreme.relative,
      p: extreme.p,
    });
    return {
      keys: test.keys,
      fullest: side(test.fullest),
      emptiest: side(test.emptiest),
      phi: test.phi,
      spreadP: test.spreadP,
      rejects: test.fullest.p <= this.settings.alpha || test.emptiest.p <= this.settings.alpha,
      sketchMargin,
    };
  }

  /** Key-space shares: equal under the uniform null, else the declared ones (null when equal). */
  private keyShares(m: number): Float64Array | null {
    if (this.settings.null === 'uniform') return null;
    const declared = this.universe.shares.subarray(0, m);
    let sum = 0;
    let equal = true;
    for (let index = 0; index < m; index++) {
      sum += declared[index];
      if (declared[index] !== declared[0]) equal = false;
    }
    return equal ? null : Float64Array.from(declared, (share) => share / sum);
  }
}

function round(value: number): string {
  return Math.round(value).toLocaleString('en-US');
}

function keysText(keys: number, exact: boolean): string {
  return exact ? round(keys) : `about ${round(keys)}`;
}

function ratio(value: number): string {
  return `${value.toFixed(2)}x`;
}

function percent(value: number): string {
  return `${(value * 100).toFixed(value < 0.1 ? 1 : 0)}%`;
}

function pText(p: number): string {
  return p < 1e-3 ? p.toExponential(1) : p.toPrecision(2);
}
