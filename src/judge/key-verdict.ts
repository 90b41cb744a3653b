import type { ClosedWindow } from '../window/event-time-window.js';
import type { Judgement } from './judgement.js';

/**
 * What made the shards of one window hot, from the keys of its requests: the `keys` field
 * of a verdict line, present when the window's records carried keys. Computed in
 * src/keys/; only the shape lives here, so the screen, the metrics and the reports read it
 * as they read the rest of a Judgement. Every count marked as an estimate states its error.
 */
export interface KeyVerdict {
  /** Requests in the window that carried a key. */
  readonly keyedRequests: number;
  /** Distinct keys summed over the shards (an estimate when `distinctExact` is false). */
  readonly distinctKeys: number;
  readonly distinctExact: boolean;
  /** The sketches and their published error bounds. */
  readonly sketch: KeySketchFacts;
  /** Distinct keys per shard against K keys placed at random; null with fewer than 2 shards. */
  readonly placement: KeyPlacementVerdict | null;
  /** The fullest load if these key weights had been placed at random; null without a hot shard. */
  readonly replacement: ReplacementVerdict | null;
  /** The key evidence of the flagged shards (hot first), at most --max-flagged. */
  readonly shards: readonly ShardKeyEvidence[];
  /** One cause per hot shard, and for a shard whose key count is off without a hot load. */
  readonly causes: readonly KeyCause[];
  readonly notes: readonly string[];
}

export interface KeySketchFacts {
  /** Space-Saving counters per shard and window. */
  readonly counters: number;
  /** HyperLogLog registers per shard and window. */
  readonly registers: number;
  /** Relative standard error of a sketched distinct count, 1.04 / sqrt(registers). */
  readonly standardError: number;
  /** Distinct keys per shard counted exactly before the sketch takes over. */
  readonly exactUpTo: number;
}

export interface KeyPlacementVerdict {
  /** K: keys placed. */
  readonly keys: number;
  readonly fullest: KeyCountVerdict;
  readonly emptiest: KeyCountVerdict;
  /** Dispersion index of the key counts (1 under random placement). */
  readonly phi: number;
  /** Its p-value; null when some count is an estimate. */
  readonly spreadP: number | null;
  /** True when the fullest or emptiest side rejects at alpha: keys per shard are off. */
  readonly rejects: boolean;
  /** Standard errors an estimated count is moved toward its fair share before testing. */
  readonly sketchMargin: number;
}

export interface KeyCountVerdict {
  readonly shard: string;
  readonly keys: number;
  readonly exact: boolean;
  /** K p_i. */
  readonly expected: number;
  readonly relative: number;
  /** Max-statistic p-value for K keys placed at random. */
  readonly p: number;
}

export interface ReplacementVerdict {
  /** Observed fullest relative load of the keyed requests. */
  readonly observed: number;
  /** Add-one Monte Carlo p-value: P(fullest >= observed) were the keys placed at random. */
  readonly p: number;
  /** 95% Wilson interval of that probability. */
  readonly low: number;
  readonly high: number;
  readonly confidence: number;
  readonly simulations: number;
  readonly exceeded: number;
  readonly heavyKeys: number;
  readonly lightKeys: number;
  readonly lightRequests: number;
  readonly seed: number;
}

export interface TopKey {
  /** The key as kept: at most 128 UTF-16 code units (a longer one is cut and ends in ~ and 8 hex digits). */
  readonly key: string;
  /** Space-Saving count: never below the true count... */
  readonly count: number;
  /** ...and at most this much above it. */
  readonly overestimate: number;
}

export interface ShardKeyEvidence {
  readonly shard: string;
  readonly finding: 'hotspot' | 'cold';
  /** Requests with a key on this shard. */
  readonly keyedRequests: number;
  readonly distinct: number;
  readonly distinctExact: boolean;
  /** K p_i: distinct keys random placement puts here on average. */
  readonly distinctExpected: number;
  /** Max-statistic p-value of this shard's key count (too many for a hot shard, too few for a cold one). */
  readonly distinctP: number;
  /** The most requested keys, at most 3. */
  readonly topKeys: readonly TopKey[];
}

/** The three causes, in the words of the verdict stream. */
export type KeyCauseName = 'hot key' | 'placement' | 'moved';

/**
 * - `hot key`: one key carries at least half of the shard's excess (counting only what
 *   Space-Saving guarantees).
 * - `placement`: the excess is spread over many keys, or the shard's key count is off
 *   (`basis` says which evidence).
 * - `moved`: a cold shard in the same window lost about what this one gained (the
 *   failover pattern), and no single key explains the excess.
 */
export interface KeyCause {
  readonly shard: string;
  readonly cause: KeyCauseName;
  /**
   * `keys per shard`: the key placement test rejects on this shard; `weights`: the
   * re-placement test finds the load unlikely for these key weights; `heavy keys together`:
   * neither, several heavy keys share the shard; `one key`, `cold shard` for the other causes.
   */
  readonly basis: 'one key' | 'keys per shard' | 'weights' | 'heavy keys together' | 'cold shard';
  /** Requests above the fair share; 0 for a shard judged on its key count alone. */
  readonly excess: number;
  /** The shard's most requested key, with its count and overestimate. */
  readonly topKey: TopKey | null;
  /** The share of the excess the top key surely carries: (count - overestimate) / excess, at most 1. */
  readonly topKeyShare: number;
  /** The most it can carry: count / excess, at most 1. */
  readonly topKeyShareAtMost: number;
  readonly distinct: number;
  readonly distinctExpected: number;
  /** For `moved`: the cold shard and the requests it lacks below its fair share. */
  readonly from: { readonly shard: string; readonly deficit: number } | null;
  /** One sentence with the numbers, for the screen and reports. */
  readonly summary: string;
}

/**
 * The seam between the pipeline and key analysis (src/keys/ implements it): the pipeline
 * hands it every keyed request it has counted and asks it for the verdict of each window it
 * judges. The pipeline knows nothing else about keys.
 */
export interface WindowKeyAnalyst {
  /** A keyed request the windows counted: shard index in the universe, `count` requests. */
  record(ts: number, shardIndex: number, key: string, count: number): void;
  /**
   * Takes a window's key statistics as it closes (later keyed requests no longer reach it)
   * and returns what makes its key verdict once the window is judged: null when none of
   * its requests carried a key. The judgement may come later (a judge on another thread).
   */
  close(window: ClosedWindow): (judgement: Judgement) => KeyVerdict | null;
}
