import { probabilityFromLog } from '../chance/log-space.js';
import { spreadTest } from '../chance/spread.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import type { ShardRemap, ShardUniverse } from '../window/shard-universe.js';
import { BaselineShares } from './baseline-shares.js';
import { ChanceMemo } from './chance-memo.js';
import { robustSpread, scaleCounts } from './dispersion-scaling.js';
import { PooledSpread, tailDispersion, type SpreadEstimate } from './pooled-spread.js';
import {
  IncidentTracker,
  windowsWithoutFlagToClearFactor,
  type PersistenceUpdate,
  type SequentialFlag,
  type TrackedIncident,
} from './incident-tracker.js';
import { checkJudgeSettings, type JudgeSettings } from './judge-settings.js';
import { leastNullRunLength, SequentialEvidence } from './sequential-evidence.js';
import { flagShards } from './flagged-shards.js';
import {
  describeSpreadMode,
  leastShardsForRobust,
  round,
  spreadReadyWindows,
  spreadSpanWindows,
} from './spread-mode.js';
import { level, placementOf, shareAt } from './window-placement.js';
import type {
  BaselineStatus,
  ExtremeShardVerdict,
  Finding,
  Incident,
  Judgement,
} from './judgement.js';

const dayMs = 86_400_000;
/**
 * Relative loads are compared with the ceiling and floor with this slack: both are
 * quotients of whole counts by the fair share, computed in different orders, and a shard
 * exactly at the ceiling must not be flagged by a rounding error.
 */
const comparisonSlack = 1e-9;

/** The shares a window is judged against, and what they rest on. */
interface NullShares {
  /** Null: equal shares (the engine's fast path). */
  readonly shares: Float64Array | null;
  /** Changes whenever the shares do (cache key). */
  readonly version: string;
  /** 1 / (1 + N / S_eff) under a ready baseline, else 1. */
  readonly uncertainty: number;
  readonly baseline?: BaselineStatus;
}

/**
 * Judges closed windows: null model, spread mode, findings, flagged shards and persistence
 * (docs/model.md, "Verdicts"). Pure: no I/O, no clock; state is the persistence streaks, the
 * learned baseline and a memo of chance answers. Settings are checked when it is built.
 *
 * Per window: one O(m) pass for the loads, the spread test and the robust spread (O(m)),
 * the chance ceiling and floor (remembered per total), the fullest/emptiest/empty tails,
 * and adjusted p-values for at most --max-flagged shards per side: only shards above the
 * chance ceiling (below the floor) can have an adjusted p at or below alpha, by the
 * definition of the ceiling as the (1 - alpha) quantile of the fullest shard's load.
 *
 * The false-incident rate is windows_per_day x alpha^confirm, an approximation: it treats
 * windows as independent (sliding windows overlap, so it understates there) and counts any
 * shard's k-in-a-row as one, while by chance the same shard must repeat, so for tumbling
 * windows it is an upper estimate.
 */
export class Judge {
  readonly settings: JudgeSettings;
  private readonly universe: ShardUniverse;
  private readonly tracker: IncidentTracker;
  /** The CUSUM across windows; null at --min-excess 0 (no design excess to test for). */
  private readonly sequential: SequentialEvidence | null;
  private readonly baseline: BaselineShares | null;
  private readonly pooled = new PooledSpread(spreadSpanWindows);
  private readonly memo: ChanceMemo;
  /**
   * Memo keys: declared shares belong to a universe (numbered by the memo, so judges sharing
   * it agree), learned ones to one judge.
   */
  private readonly universeKey: number;
  private readonly judgeKey: number;
  private declaredCache: { size: number; shares: Float64Array | null } | null = null;
  private scratch = new Float64Array(0);
  private judgedScratch = new Float64Array(0);
  private exactScratch = new Float64Array(0);
  /** Ids retired since the last judged window, and incidents that ended with them. */
  private retiredSinceWindow = 0;
  private endedByRetirement: { readonly id: string; readonly incident: TrackedIncident }[] = [];

  /**
   * @param universe the shards the windows count (ids, declared shares, declared or growing)
   * @param settings checked here; a bad value throws a UsageError naming its option
   * @param options `memo`: chance answers shared with other judges (the same windows judged
   *   under several settings, as a review or a calibration run does)
   */
  constructor(
    universe: ShardUniverse,
    settings: JudgeSettings,
    options: { memo?: ChanceMemo } = {},
  ) {
    this.settings = checkJudgeSettings(settings);
    this.universe = universe;
    this.memo = options.memo ?? new ChanceMemo();
    this.universeKey = this.memo.universeKey(universe);
    this.judgeKey = nextJudgeKey++;
    this.tracker = new IncidentTracker(settings.confirm, settings.clear);
    this.sequential =
      settings.minExcess > 0 ? new SequentialEvidence(settings.minExcess, settings.confirm) : null;
    this.baseline =
      settings.null === 'baseline' ? new BaselineShares(settings.baselineWindows) : null;
    if (!universe.declared) universe.onRetire((remap) => this.followRetirement(remap));
  }

  /** The approximate false-incident rate per day under random placement (see the class note). */
  get falseIncidentsPerDay(): number {
    return (dayMs / this.settings.hopMs) * this.settings.alpha ** this.settings.confirm;
  }

  /**
   * The CUSUM's false-incident rate per day for m shards: its threshold is set so that this
   * is the window rule's rate, and it is an upper estimate at every traffic level (the least
   * null run length of sequential-evidence.ts). Null when the CUSUM is off.
   */
  cusumFalseIncidentsPerDay(m: number): number | null {
    if (this.sequential === null) return null;
    if (m === 0) return 0;
    const threshold = this.sequential.threshold(m, this.settings.alpha ** this.settings.confirm);
    return ((dayMs / this.settings.hopMs) * m) / leastNullRunLength(threshold);
  }

  /** Judges one closed window; windows must come in start order. */
  judge(window: ClosedWindow): Judgement {
    const s = this.settings;
    const counts = window.counts;
    const m = counts.length;
    const n = window.total;
    const coldTests = this.universe.declared;
    const notes: string[] = [];
    if (!coldTests) {
      notes.push(
        'cold tests off: no declared shard universe (--shards or --shard-map), so a shard that never reports cannot be seen',
      );
    }
    this.ensureScratch(m);
    const nullShares = this.nullShares(m, n);
    if (nullShares.baseline !== undefined && !nullShares.baseline.ready) {
      notes.push(
        `baseline learning (${nullShares.baseline.learnedWindows} of ${nullShares.baseline.neededWindows} windows): judged against the declared shares; what happens now is learned as usual load`,
      );
    }
    const inexact = firstInexactCount(counts);
    if (inexact >= 0) {
      // The sources refuse such counts; a caller of this class might not. Every method in
      // src/chance counts whole requests: a negative count would be judged as a cold shard.
      notes.push(
        `not judged: shard ${this.universe.idAt(inexact)} has the count ${counts[inexact]}, not a whole number of at least 0`,
      );
      return this.quietWindow(window, m, coldTests, nullShares, notes, [], 'counts not exact');
    }
    if (!Number.isSafeInteger(n)) {
      // Counts above 2^53 - 1 are no longer whole numbers in a double: neighbours collapse
      // (2^53 + 1 reads as 2^53), so the counts may not even add up to the total, and every
      // tail, threshold and quantile in src/chance assumes exact counts (makePlacement
      // refuses such totals). Such a window is reported, not judged.
      notes.push(
        `not judged: the window total ${n} is not a whole number up to 2^53 - 1, so its counts are not exact`,
      );
      return this.quietWindow(window, m, coldTests, nullShares, notes, []);
    }
    if (m === 0 || n === 0) return this.quietWindow(window, m, coldTests, nullShares, notes);
    const shares = nullShares.shares;

    // The spread, against the null shares (counts scaled only for a learned baseline's own noise).
    let exactCounts: ArrayLike<number> = counts;
    let exactTotal = n;
    if (nullShares.uncertainty < 1) {
      exactTotal = scaleCounts(counts, nullShares.uncertainty, this.exactScratch);
      exactCounts = this.exactScratch;
    }
    const spread = spreadTest(placementOf(exactTotal, m, shares), exactCounts);
    const spreadP = probabilityFromLog(spread.logProbability);
    const robustPhi = robustSpread(counts, n, shares, this.scratch);

    // The learned spread (not in exact mode): pooled over recent windows. While it learns,
    // the window itself is learned first (no shard left out: nothing is known yet) so the
    // estimate has it; once ready, the estimate rests on earlier windows only and this
    // window is learned after judging, without its hot and cold candidates.
    const learnsSpread = s.spread !== 'exact';
    const spreadReady = learnsSpread && this.pooled.learnedWindows >= spreadReadyWindows;
    if (learnsSpread && !spreadReady) this.pooled.learn(counts, n, shares, noShards);
    const learned: SpreadEstimate | null = learnsSpread ? this.pooled.estimate(m) : null;
    if (learnsSpread && !spreadReady) {
      notes.push(
        `spread learning (${this.pooled.learnedWindows} of ${spreadReadyWindows} windows): "uneven" is judged against random placement until the cluster's usual spread is learned`,
      );
    }

    // The spread mode: how many independent placements the counts are worth. Auto turns
    // robust when this window's spread test rejects or the learned spread is surely above 1.
    const spreadRejects = spreadP <= s.alpha;
    const tooFewForRobust = m < leastShardsForRobust;
    const learnedAbove = spreadReady && learned !== null && learned.lower > 1;
    const robust =
      s.spread === 'robust' ||
      (s.spread === 'auto' && (spreadRejects || learnedAbove) && !tooFewForRobust);
    if (robust && tooFewForRobust) {
      notes.push(
        `robust spread with only ${m} shards: the median residual cannot tell a general spread from one shard standing out`,
      );
    }
    // Under a learned baseline the counts already carry 1 / uncertainty of extra variance,
    // so that is the least dispersion the robust mode may assume.
    const leastDispersion = 1 / nullShares.uncertainty;
    const learnedUpper = learned === null ? 1 : Math.min(learned.upper, Number.MAX_VALUE);
    // The fullest and emptiest tests divide by the bound matched on the tail of clumped
    // counts at the per-shard level alpha / m (pooled-spread.ts, tailDispersion).
    let dispersion = robust
      ? Math.max(tailDispersion(n / m, learnedUpper, s.alpha / m), leastDispersion)
      : leastDispersion;
    let judgedCounts: ArrayLike<number> = counts;
    let judgedTotal = n;
    if (dispersion > 1) {
      judgedTotal = scaleCounts(counts, 1 / dispersion, this.judgedScratch);
      judgedCounts = this.judgedScratch;
    }
    // Beyond the usual spread: once it is learned, a window whose spread test rejects on the
    // divided counts too, with phi above --min-dispersion times the learned phi. Such a
    // window's general spread changed; its shards are then judged against the window's own
    // robust spread where that is wider (as before learning), so a broad change reads as
    // uneven, not as many hot and cold shards.
    let beyondUsual = false;
    if (spreadReady && learned !== null && spreadRejects && robust) {
      const ratioAbove = spread.dispersion > s.minDispersion * Math.max(learned.phi, 1);
      beyondUsual =
        ratioAbove &&
        probabilityFromLog(
          spreadTest(placementOf(judgedTotal, m, shares), judgedCounts).logProbability,
        ) <= s.alpha;
      if (beyondUsual && robustPhi > dispersion) {
        dispersion = robustPhi;
        judgedTotal = scaleCounts(counts, 1 / dispersion, this.judgedScratch);
        judgedCounts = this.judgedScratch;
      }
    }
    const spreadReason = describeSpreadMode(
      m,
      s,
      robust,
      spreadRejects,
      spreadP,
      spread.dispersion,
      learned,
      robustPhi,
      dispersion,
    );
    const placement = placementOf(judgedTotal, m, shares);
    const version = `${nullShares.version}|${m}`;

    const ceilingRelative = this.memo.ceiling(placement, version, s.alpha);
    const floorRelative = coldTests ? this.memo.floor(placement, version, s.alpha) : null;

    // One pass: extremes on the judged loads, practical size on the real ones, candidates.
    let fullest = 0;
    let emptiest = 0;
    let fullestJudged = -Infinity;
    let emptiestJudged = Infinity;
    let empties = 0;
    const hotCandidates: number[] = [];
    const coldCandidates: number[] = [];
    const hotLine = ceilingRelative * (1 + comparisonSlack);
    const coldLine = floorRelative === null ? -Infinity : floorRelative * (1 - comparisonSlack);
    const leastHot = 1 + s.minExcess;
    for (let shard = 0; shard < m; shard++) {
      const share = shares === null ? 1 / m : shares[shard];
      const judged = judgedCounts[shard] / (judgedTotal * share);
      const real = counts[shard] / (n * share);
      if (
        judged > fullestJudged ||
        (judged === fullestJudged && real > counts[fullest] / (n * shareAt(shares, fullest, m)))
      ) {
        fullestJudged = judged;
        fullest = shard;
      }
      if (judged < emptiestJudged) {
        emptiestJudged = judged;
        emptiest = shard;
      }
      if (counts[shard] === 0) empties++;
      if (judged > hotLine && real >= leastHot) hotCandidates.push(shard);
      if (judged < coldLine) coldCandidates.push(shard);
    }

    const fullestP = probabilityFromLog(
      this.memo.fullestTail(placement, version, fullestJudged).logProbability,
    );
    const fullestReal = counts[fullest] / (n * shareAt(shares, fullest, m));
    const emptiestP = coldTests
      ? probabilityFromLog(
          this.memo.emptiestTail(placement, version, emptiestJudged).logProbability,
        )
      : null;
    const emptyP = coldTests
      ? probabilityFromLog(this.memo.emptyTail(placement, version, empties).logProbability)
      : null;
    const emptyExpected = this.memo.emptyMean(placement, version);

    const hotspot = fullestP <= s.alpha && fullestReal >= leastHot;
    const cold = coldTests && ((emptiestP as number) <= s.alpha || (emptyP as number) <= s.alpha);
    // Uneven: against random placement in exact mode and while the spread learns; once it
    // is learned, uneven beyond the cluster's usual spread (the spread test on the counts
    // divided by the learned bound rejects too, and phi is above --min-dispersion times the
    // learned phi), so steady lumpiness is not uneven and a change is.
    let uneven = spreadRejects && spread.dispersion > s.minDispersion && !hotspot;
    if (spreadReady && robust) uneven = beyondUsual && !hotspot;
    // Too little traffic is said when random placement itself would hide a 3x shard; when
    // only the lumpiness does, the traffic is plenty and the notes say what is detectable.
    let tooLittle = ceilingRelative > s.maxDetectable;
    if (tooLittle && dispersion > 1 && judgedTotal < n) {
      const exactCeiling = this.memo.ceiling(placementOf(exactTotal, m, shares), version, s.alpha);
      if (exactCeiling <= s.maxDetectable) {
        tooLittle = false;
        notes.push(
          `lumpy traffic: counts vary about ${round(dispersion)}x as much as random placement makes them, so only a shard above ${round(ceilingRelative)}x its fair share can be told from that (random placement alone would show ${round(exactCeiling)}x)`,
        );
      }
    }
    const findings: Finding[] = [];
    if (hotspot) findings.push('hotspot');
    if (cold) findings.push('cold');
    if (uneven) findings.push('uneven');
    if (!hotspot && !cold && !uneven && !tooLittle) findings.push('chance');
    if (tooLittle) findings.push('too little traffic');

    // Under a learned baseline the CUSUM waits for the baseline: evidence against shares
    // not yet learned would open incidents that in turn keep the baseline from learning.
    const nullLearning = nullShares.baseline !== undefined && !nullShares.baseline.ready;
    const sequentialHot = this.accumulate(
      window,
      judgedCounts,
      judgedTotal,
      shares,
      m,
      tooLittle || nullLearning,
    );
    const update = this.tracker.update(
      window.start,
      hotCandidates,
      coldCandidates,
      tooLittle,
      sequentialHot,
    );
    this.afterUpdate(update, notes);
    const flagged = flagShards(
      this.memo,
      this.universe,
      s.maxFlagged,
      hotCandidates,
      coldCandidates,
      placement,
      version,
      judgedCounts,
      counts,
      n,
      shares,
      update.streaks,
    );

    if (spreadReady) {
      this.pooled.learn(counts, n, shares, new Set([...hotCandidates, ...coldCandidates]));
    }

    if (this.baseline !== null) {
      const learnable =
        !this.baseline.ready ||
        (!this.tracker.anyOpen && hotCandidates.length === 0 && coldCandidates.length === 0);
      if (learnable) this.baseline.learn(counts, n);
    }

    const equalShares = shares === null;
    const fairShare = n / m;
    return {
      window: { start: iso(window.start), end: iso(window.end) },
      requests: n,
      shards: m,
      null: s.null,
      ...(nullShares.baseline === undefined ? {} : { baseline: nullShares.baseline }),
      spreadMode: robust ? 'robust' : 'exact',
      spreadReason,
      findings,
      pattern: hotspot && cold ? 'failover' : null,
      fullest: this.extreme(fullest, counts, fullestReal, fullestP),
      emptiest: this.extreme(
        emptiest,
        counts,
        counts[emptiest] / (n * shareAt(shares, emptiest, m)),
        emptiestP,
      ),
      empty: { observed: empties, expected: emptyExpected, p: emptyP },
      spread: {
        phi: spread.dispersion,
        p: spreadP,
        robustPhi,
        ...(learned === null
          ? {}
          : {
              learned: {
                phi: learned.phi,
                upper: learnedUpper,
                windows: learned.windows,
                ready: spreadReady,
              },
            }),
      },
      nEff: n / Math.max(spread.dispersion, 1),
      judgedRequests: judgedTotal,
      ceiling: level(ceilingRelative, equalShares, fairShare),
      floor: floorRelative === null ? null : level(floorRelative, equalShares, fairShare),
      detectableExcess: ceilingRelative,
      flagged,
      ...this.closingFields(window, update, update.opened, m, coldTests, notes),
    };
  }

  /** A window without requests (or without shards yet): nothing can be told from chance. */
  private quietWindow(
    window: ClosedWindow,
    m: number,
    coldTests: boolean,
    nullShares: NullShares,
    notes: string[],
    findings: Finding[] = ['too little traffic'],
    inexact = 'total not exact',
  ): Judgement {
    this.sequential?.reset();
    const update = this.tracker.update(window.start, [], [], true);
    if (findings.length > 0) {
      notes.push(
        m > 0
          ? 'no requests in this window'
          : this.universe.retiredTotal > 0
            ? 'no shard is reporting: every id seen has retired'
            : 'no shard has reported yet',
      );
    }
    this.afterUpdate(update, notes);
    return {
      window: { start: iso(window.start), end: iso(window.end) },
      requests: window.total,
      shards: m,
      null: this.settings.null,
      ...(nullShares.baseline === undefined ? {} : { baseline: nullShares.baseline }),
      spreadMode: this.settings.spread === 'robust' ? 'robust' : 'exact',
      spreadReason:
        findings.length > 0 ? 'no requests: nothing to judge' : `${inexact}: not judged`,
      findings,
      pattern: null,
      fullest: null,
      emptiest: null,
      empty: { observed: m, expected: m, p: coldTests ? 1 : null },
      spread: { phi: 1, p: 1, robustPhi: 1 },
      nEff: 0,
      judgedRequests: 0,
      ceiling: { relative: 0, requests: 0 },
      floor: coldTests ? { relative: 0, requests: 0 } : null,
      detectableExcess: null,
      flagged: [],
      ...this.closingFields(window, update, [], m, coldTests, notes),
    };
  }

  /**
   * What ends every judgement, judged or quiet, in the verdict stream's order: the incidents
   * (open, opened with this window, cleared) and the window's bookkeeping.
   */
  private closingFields(
    window: ClosedWindow,
    update: PersistenceUpdate,
    opened: readonly TrackedIncident[],
    m: number,
    coldTests: boolean,
    notes: string[],
  ): Pick<
    Judgement,
    | 'incidents'
    | 'opened'
    | 'cleared'
    | 'falseIncidentsPerDay'
    | 'cusumFalseIncidentsPerDay'
    | 'late'
    | 'rejected'
    | 'coldTests'
    | 'retiredShards'
    | 'alpha'
    | 'notes'
  > {
    return {
      incidents: update.open.map((incident) => this.incident(incident, window.start)),
      opened: opened.map((incident) => this.incident(incident, window.start)),
      cleared: [
        ...this.endedIncidents(window.start),
        ...update.cleared.map((incident) => this.incident(incident, window.start)),
      ],
      falseIncidentsPerDay: this.falseIncidentsPerDay,
      cusumFalseIncidentsPerDay: this.cusumFalseIncidentsPerDay(m),
      late: window.late,
      rejected: window.rejected,
      coldTests,
      ...this.retirementFields(),
      alpha: this.settings.alpha,
      notes,
    };
  }

  private extreme(
    shard: number,
    counts: ArrayLike<number>,
    relative: number,
    p: number | null,
  ): ExtremeShardVerdict {
    return { shard: this.universe.idAt(shard), count: counts[shard], relative, p };
  }

  private incident(
    incident: TrackedIncident,
    windowStart: number,
    shard = this.universe.idAt(incident.index),
  ): Incident {
    return {
      shard,
      finding: incident.finding,
      since: iso(incident.since),
      windows: Math.round((windowStart - incident.since) / this.settings.hopMs) + 1,
      test: incident.test,
    };
  }

  /**
   * A growing universe retired ids (at a window boundary, before the next window reaches
   * the judge): streaks and learned shares move to the new indices; open incidents of
   * retired shards end, and are listed as cleared with the next window.
   */
  private followRetirement(remap: ShardRemap): void {
    for (const incident of this.tracker.follow(remap.indexAfter)) {
      this.endedByRetirement.push({ id: remap.previousIds[incident.index], incident });
    }
    this.baseline?.follow(remap.indexAfter, remap.size);
    this.declaredCache = null;
    this.retiredSinceWindow += remap.retired;
  }

  /** `retiredShards` of a verdict over a growing universe (absent for a declared one). */
  private retirementFields(): { retiredShards?: number } {
    if (this.universe.declared) return {};
    const retiredShards = this.retiredSinceWindow;
    this.retiredSinceWindow = 0;
    return { retiredShards };
  }

  /** Incidents ended by a retirement since the last window, as cleared with this one. */
  private endedIncidents(windowStart: number): Incident[] {
    // A retired id is no longer the universe's at the incident's index: it is named here.
    const ended = this.endedByRetirement.map(({ id, incident }) =>
      this.incident(incident, windowStart, id),
    );
    this.endedByRetirement = [];
    return ended;
  }

  /**
   * The CUSUM's step for one window: the shards it holds hot. A window with too little
   * traffic ends every run of evidence.
   */
  private accumulate(
    window: ClosedWindow,
    judgedCounts: ArrayLike<number>,
    judgedTotal: number,
    shares: Float64Array | null,
    m: number,
    tooLittle: boolean,
  ): SequentialFlag[] {
    const sequential = this.sequential;
    if (sequential === null) return [];
    if (tooLittle) {
      sequential.reset();
      return [];
    }
    const s = this.settings;
    const weight = Math.min(1, s.hopMs / (window.end - window.start));
    const threshold = sequential.threshold(m, s.alpha ** s.confirm);
    return sequential.update(window.start, weight, judgedCounts, judgedTotal, shares, m, threshold);
  }

  /** Notes on what opened and cleared, and a fresh CUSUM for a shard whose hotspot cleared. */
  private afterUpdate(update: PersistenceUpdate, notes: string[]): void {
    for (const incident of update.opened) {
      if (incident.test !== 'cusum') continue;
      notes.push(
        `hotspot incident on ${this.universe.idAt(incident.index)} opened by evidence accumulated across windows (CUSUM for ${round(1 + this.settings.minExcess)}x the share), not by ${this.settings.confirm} flagged windows in a row`,
      );
    }
    const quiet = this.settings.clear * windowsWithoutFlagToClearFactor;
    for (const incident of update.clearedWithoutEvidence) {
      notes.push(
        `${incident.finding} incident on ${this.universe.idAt(incident.index)} cleared after ${quiet} windows without a flag, some with too little traffic to judge: it could no longer be seen, not seen to end`,
      );
    }
    for (const incident of update.cleared) {
      if (incident.finding === 'hotspot') this.sequential?.forget(incident.index);
    }
  }

  /** The null shares for this window's m shards and N requests. */
  private nullShares(m: number, n: number): NullShares {
    if (this.settings.null === 'uniform') return { shares: null, version: 'u', uncertainty: 1 };
    const declared = this.declaredShares(m);
    const declaredVersion = declared === null ? 'u' : `d${this.universeKey}`;
    if (this.baseline === null)
      return { shares: declared, version: declaredVersion, uncertainty: 1 };
    const status: BaselineStatus = {
      ready: this.baseline.ready,
      learnedWindows: this.baseline.learnedWindows,
      neededWindows: this.baseline.neededWindows,
    };
    if (!status.ready)
      return { shares: declared, version: declaredVersion, uncertainty: 1, baseline: status };
    return {
      shares: this.baseline.shares(m, declared),
      version: `b${this.judgeKey}.${this.baseline.sharesVersion}`,
      uncertainty: this.baseline.uncertaintyScale(n, m),
      baseline: status,
    };
  }

  /** The universe's declared shares, or null when they are all equal. O(m) when m changes. */
  private declaredShares(m: number): Float64Array | null {
    if (this.declaredCache?.size === m) return this.declaredCache.shares;
    const shares = this.universe.shares.subarray(0, m);
    let equal = true;
    for (let shard = 1; shard < m; shard++) if (shares[shard] !== shares[0]) equal = false;
    // A growing universe may have grown past this window's m: renormalise the prefix.
    let sum = 0;
    for (let shard = 0; shard < m; shard++) sum += shares[shard];
    const normalised = equal ? null : Float64Array.from(shares, (share) => share / sum);
    this.declaredCache = { size: m, shares: normalised };
    return normalised;
  }

  private ensureScratch(m: number): void {
    if (this.scratch.length >= m) return;
    this.scratch = new Float64Array(m);
    this.judgedScratch = new Float64Array(m);
    this.exactScratch = new Float64Array(m);
  }
}

const noShards: ReadonlySet<number> = new Set();
let nextJudgeKey = 0;
function iso(ms: number): string {
  return new Date(ms).toISOString();
}

/** The index of the first count that is not a whole number of at least 0, or -1. */
function firstInexactCount(counts: ArrayLike<number>): number {
  for (let shard = 0; shard < counts.length; shard++) {
    const count = counts[shard];
    if (!(count >= 0 && Number.isInteger(count))) return shard;
  }
  return -1;
}
