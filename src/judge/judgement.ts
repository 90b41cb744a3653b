import type { RejectionReason } from '../window/count-record.js';
import type { KeyVerdict } from './key-verdict.js';

/**
 * The verdict on one closed window: one line of `watch --no-ui`, and the core of each line
 * of a recording (docs/formats.md, "Verdict stream"). Every probability is a p-value under
 * the null model named in `null`; it is statistical evidence, never certainty.
 *
 * Units: `relative` is the relative load r = x / (N p), 1 being the fair share. `ceiling`
 * and `floor` carry both the relative load and, where every shard has the same fair share,
 * the count in requests (null otherwise, because with unequal shares each shard has its
 * own fair share and no single count is the ceiling).
 */
export interface Judgement {
  readonly window: { readonly start: string; readonly end: string };
  /** N, the requests counted in the window. */
  readonly requests: number;
  /** m, the shards judged (the declared universe, or those seen so far). */
  readonly shards: number;
  /** The null model asked for. */
  readonly null: NullModelName;
  /** Present only for the baseline null: how far learning has come. */
  readonly baseline?: BaselineStatus;
  /** The spread mode the verdict used (`auto` resolves to one of the two). */
  readonly spreadMode: 'exact' | 'robust';
  /** Why that mode: the setting, or the spread test that made `auto` choose. */
  readonly spreadReason: string;
  /** In docs/formats.md order: hotspot, cold, uneven, chance, too little traffic. */
  readonly findings: readonly Finding[];
  /** `failover` when a cold shard and a hotspot share the window (traffic moved). */
  readonly pattern: 'failover' | null;
  /** The shard with the highest relative load; null when there are no requests. */
  readonly fullest: ExtremeShardVerdict | null;
  /** The shard with the lowest relative load; p is null when the cold tests are off. */
  readonly emptiest: ExtremeShardVerdict | null;
  readonly empty: {
    readonly observed: number;
    readonly expected: number;
    /** P(this many or more empty shards); null when the cold tests are off. */
    readonly p: number | null;
  };
  readonly spread: {
    /** Dispersion index X^2 / (m - 1) against the null shares; 1 under random placement. */
    readonly phi: number;
    readonly p: number;
    /** Median squared Pearson residual / 0.4549 (1 under random placement): this window alone, reported only. */
    readonly robustPhi: number;
    /**
     * The cluster's usual spread, pooled over recent windows (not in exact mode): phi, the
     * upper 95% bound the robust mode divides by, windows learned, and whether it is ready
     * (then "uneven" means beyond it).
     */
    readonly learned?: {
      readonly phi: number;
      readonly upper: number;
      readonly windows: number;
      readonly ready: boolean;
    };
  };
  /** N_eff = N / max(phi, 1): independent placements the spread is worth (docs/model.md). */
  readonly nEff: number;
  /**
   * The total the fullest/emptiest/empty tests used: N, or N / dispersion in robust mode
   * (and less than N under a learned baseline, whose own uncertainty it absorbs).
   */
  readonly judgedRequests: number;
  /** Chance ceiling: (1 - alpha) quantile of the fullest shard's relative load. */
  readonly ceiling: LoadLevel;
  /** Chance floor: alpha quantile of the emptiest shard's; null when the cold tests are off. */
  readonly floor: LoadLevel | null;
  /** The ceiling as a multiple of the fair share; null when there are no requests (nothing is detectable). */
  readonly detectableExcess: number | null;
  /** Shards whose own evidence rejects, most significant first, at most --max-flagged. */
  readonly flagged: readonly FlaggedShard[];
  /** Findings that have held for --confirm consecutive windows and not yet cleared. */
  readonly incidents: readonly Incident[];
  /** Incidents that opened with this window. */
  readonly opened: readonly Incident[];
  /**
   * Incidents that cleared with this window: --clear clean windows in a row, or --clear x 10
   * windows in a row without a flag, judged or not (then a note says so).
   */
  readonly cleared: readonly Incident[];
  /** About windows_per_day x alpha^confirm: an approximation (see Judge). */
  readonly falseIncidentsPerDay: number;
  /**
   * The same for incidents the CUSUM opens (test `cusum`): its threshold is set to this rate
   * from Siegmund's approximation of its run length, an upper estimate at every traffic
   * level (sequential-evidence.ts). Null at --min-excess 0, where the CUSUM is off.
   */
  readonly cusumFalseIncidentsPerDay: number | null;
  /** Units of load that arrived after their window had closed (since the previous window). */
  readonly late: number;
  /** Records rejected since the previous window, by reason. */
  readonly rejected: Readonly<Partial<Record<RejectionReason, number>>>;
  /** False without a declared universe: a shard that never reports cannot be seen. */
  readonly coldTests: boolean;
  /**
   * A growing universe only (absent for a declared one): ids that retired at the boundary
   * before this window, having stopped reporting, so that they are not in `shards` (see
   * src/window/shard-retirement.ts). An open incident on a retired shard is in `cleared`.
   */
  readonly retiredShards?: number;
  readonly alpha: number;
  /** Plain-language notes on what the numbers rest on (cold tests off, baseline learning). */
  readonly notes: readonly string[];
  /**
   * Hot keys versus placement: present only when key analysis runs and the window's records
   * carried keys (absent, not null, otherwise, so count-report streams keep their shape).
   */
  readonly keys?: KeyVerdict;
  /**
   * A stretch without records just before this window, too long to judge one empty window
   * at a time (a jump of event time): skipped as a whole. Absent otherwise.
   */
  readonly gapBefore?: { readonly start: string; readonly end: string; readonly windows: number };
  /**
   * Source partitions (Kafka partitions) that have been quiet long enough to stop holding
   * windows back. Absent when every partition reports (and for one-partition sources).
   */
  readonly idlePartitions?: readonly number[];
}

export type Finding = 'hotspot' | 'cold' | 'uneven' | 'chance' | 'too little traffic';

/** The names of `--null`. */
export type NullModelName = 'uniform' | 'map' | 'baseline';

/** The names of `--spread`. */
export type SpreadModeName = 'exact' | 'robust' | 'auto';

export interface ExtremeShardVerdict {
  readonly shard: string;
  readonly count: number;
  readonly relative: number;
  /** Single-step max-statistic p-value (P(max r >= r_obs) or P(min r <= r_obs)). */
  readonly p: number | null;
}

export interface LoadLevel {
  readonly relative: number;
  /** The same level in requests per shard; null when shares are unequal. */
  readonly requests: number | null;
}

export interface FlaggedShard {
  readonly shard: string;
  readonly finding: 'hotspot' | 'cold';
  readonly count: number;
  readonly relative: number;
  /** Adjusted p-value: P_H0(max r >= r_i) for a hotspot, P_H0(min r <= r_i) for a cold shard. */
  readonly p: number;
  /** The plain per-shard binomial tail, for comparison only; it ignores the other m - 1 shards. */
  readonly binomialP: number;
  /** Consecutive windows this shard has been flagged with this finding, this one included. */
  readonly streak: number;
}

export interface Incident {
  readonly shard: string;
  readonly finding: 'hotspot' | 'cold';
  /** Start of the first window of the run that opened it, ISO. */
  readonly since: string;
  /** Windows from `since` through this one. */
  readonly windows: number;
  /**
   * The test that opened it: `window`, --confirm flagged windows in a row; `cusum`, evidence
   * accumulated across windows (a one-sided CUSUM on the shard's count) crossed its threshold.
   */
  readonly test: 'window' | 'cusum';
}

export interface BaselineStatus {
  /** True once enough windows are learned; until then the declared shares are the null. */
  readonly ready: boolean;
  readonly learnedWindows: number;
  readonly neededWindows: number;
}
