/**
 * Persistence: a shard's finding becomes an incident after it holds in `confirm`
 * consecutive windows, or when the sequential test (sequential-evidence.ts) has accumulated
 * enough evidence across windows; it clears after `clear` consecutive clean windows, a
 * window in which the sequential test still holds the shard hot not being clean for an
 * incident that test opened (docs/model.md, "Verdicts"). One chance rejection at alpha is common over a day of
 * windows; the same shard rejecting k windows in a row by chance is about alpha^k as likely.
 *
 * Consecutive means consecutive: a window with too little traffic in which the shard is not
 * flagged is no evidence either way. It never extends a streak, and it does not count as
 * clean (a short lull must not clear a hotspot). A streak survives one such window between
 * two flags, never {@link mostBridgedWindows} + 1 in a row: k scattered chance flags must
 * not add up across lulls. A flag in such a window still counts: it is a rejection at alpha
 * however little traffic there was. So that every incident has a way to clear, an open one also clears
 * after `clear` x {@link windowsWithoutFlagToClearFactor} windows in a row without a flag,
 * with or without evidence; the update names those apart. Memory holds only shards flagged
 * now or in an open incident.
 */

/** What was found on a shard. */
export type ShardFinding = 'hotspot' | 'cold';

/** The test that opened an incident: k flagged windows in a row, or the sequential test. */
export type IncidentTest = 'window' | 'cusum';

/**
 * An open incident clears after `clear` times this many windows in a row without a flag,
 * whether they could judge or not: a long lull cannot confirm the finding any more than it
 * can deny it, and an incident that outlives all evidence misleads. Our choice, stated:
 * 10 (50 windows at --clear 5) lets lulls of a few minutes pass at 10 s windows.
 */
export const windowsWithoutFlagToClearFactor = 10;

/**
 * Windows without evidence in a row that a streak survives (they do not add to it). Where
 * traffic hovers near the detectable limit, as hot keys make it, judged windows alternate
 * with windows of too little traffic, and a hot shard flagged in every judged one must
 * still make a streak. The cost, stated: with every other window a lull, chance streaks of
 * k flags end in a given window in at most 2^(k - 1) arrangements instead of one, so the
 * false-incident rate can be up to 2^(k - 1) times windows per day x alpha^k there (4 times
 * at --confirm 3); with no lulls it is unchanged. Our choice: 1.
 */
export const mostBridgedWindows = 1;

/** An open incident, in universe indices and epoch ms (the judge names and formats it). */
export interface TrackedIncident {
  readonly index: number;
  readonly finding: ShardFinding;
  /** Start of the first window of the run that opened it, epoch ms. */
  readonly since: number;
  readonly test: IncidentTest;
}

/** A shard the sequential test holds hot in this window, and since when its evidence runs. */
export interface SequentialFlag {
  readonly index: number;
  readonly since: number;
}

/** The tracker's answer for one window. */
export interface PersistenceUpdate {
  /** Streak of each shard flagged in this window, by {@link trackingKey}. */
  readonly streaks: ReadonlyMap<number, number>;
  readonly open: readonly TrackedIncident[];
  readonly opened: readonly TrackedIncident[];
  readonly cleared: readonly TrackedIncident[];
  /** Those of `cleared` that cleared by the windows-without-a-flag bound, not clean windows. */
  readonly clearedWithoutEvidence: readonly TrackedIncident[];
}

interface ShardState {
  readonly index: number;
  readonly finding: ShardFinding;
  streak: number;
  /** Windows without evidence in a row since the last flag (a streak survives a few). */
  lullRun: number;
  /** Judged windows in a row without a flag. */
  cleanRun: number;
  /** Windows in a row without a flag, judged or not. */
  quietRun: number;
  open: boolean;
  since: number;
  test: IncidentTest;
}

/** Key of (shard, finding): the index doubled, plus one for cold. */
export function trackingKey(index: number, finding: ShardFinding): number {
  return index * 2 + (finding === 'cold' ? 1 : 0);
}

export class IncidentTracker {
  private readonly confirm: number;
  private readonly clear: number;
  private readonly quietToClear: number;
  private readonly states = new Map<number, ShardState>();

  /**
   * @param confirm `--confirm`, consecutive flagged windows that open an incident
   * @param clear `--clear`, consecutive clean windows that clear one
   */
  constructor(confirm: number, clear: number) {
    this.confirm = confirm;
    this.clear = clear;
    this.quietToClear = clear * windowsWithoutFlagToClearFactor;
  }

  /** True while any incident is open. */
  get anyOpen(): boolean {
    for (const state of this.states.values()) if (state.open) return true;
    return false;
  }

  /**
   * Takes one window's flagged shards, in window order.
   * @param windowStart the window's start, epoch ms (an incident's `since`)
   * @param hot indices of shards flagged as hotspots
   * @param cold indices of shards flagged as cold
   * @param noEvidence the window had too little traffic to judge
   * @param sequentialHot shards the sequential test holds hot (each opens a hotspot
   *   incident at once; none in a window without evidence)
   * O(flagged + tracked).
   */
  update(
    windowStart: number,
    hot: readonly number[],
    cold: readonly number[],
    noEvidence: boolean,
    sequentialHot: readonly SequentialFlag[] = [],
  ): PersistenceUpdate {
    const flaggedNow = new Set<number>();
    const streaks = new Map<number, number>();
    const opened: TrackedIncident[] = [];
    const cleared: TrackedIncident[] = [];
    const clearedWithoutEvidence: TrackedIncident[] = [];
    const stateOf = (index: number, finding: ShardFinding) => {
      const key = trackingKey(index, finding);
      flaggedNow.add(key);
      let state = this.states.get(key);
      if (state === undefined) {
        state = {
          index,
          finding,
          streak: 0,
          lullRun: 0,
          cleanRun: 0,
          quietRun: 0,
          open: false,
          since: windowStart,
          test: 'window',
        };
        this.states.set(key, state);
      }
      state.lullRun = 0;
      state.cleanRun = 0;
      state.quietRun = 0;
      return state;
    };
    const mark = (index: number, finding: ShardFinding) => {
      const state = stateOf(index, finding);
      if (state.streak === 0 && !state.open) state.since = windowStart;
      state.streak++;
      if (!state.open && state.streak >= this.confirm) {
        state.open = true;
        state.test = 'window';
        opened.push(snapshot(state));
      }
      streaks.set(trackingKey(index, finding), state.streak);
    };
    for (const index of hot) mark(index, 'hotspot');
    for (const index of cold) mark(index, 'cold');
    // The sequential test opens an incident, and holds open only one it opened: one the
    // window test opened clears by its own rule, as it always has. A shard the window test
    // flags now is left to its streak, so a hotspot one window can see opens as before.
    const windowHot = new Set(hot);
    for (const flag of sequentialHot) {
      const existing = this.states.get(trackingKey(flag.index, 'hotspot'));
      if (existing?.open === true && existing.test === 'window') continue;
      if (existing?.open !== true && windowHot.has(flag.index)) continue;
      const state = stateOf(flag.index, 'hotspot');
      if (!state.open) {
        state.open = true;
        state.since = state.streak > 0 ? Math.min(flag.since, state.since) : flag.since;
        state.test = 'cusum';
        opened.push(snapshot(state));
      }
    }
    for (const [key, state] of this.states) {
      if (flaggedNow.has(key)) continue;
      if (noEvidence) state.lullRun++;
      if (!noEvidence || state.lullRun > mostBridgedWindows) state.streak = 0;
      if (!state.open) {
        if (state.streak > 0) continue;
        this.states.delete(key);
        continue;
      }
      state.quietRun++;
      if (!noEvidence) state.cleanRun++;
      if (state.cleanRun >= this.clear) {
        cleared.push(snapshot(state));
        this.states.delete(key);
      } else if (state.quietRun >= this.quietToClear) {
        const incident = snapshot(state);
        cleared.push(incident);
        clearedWithoutEvidence.push(incident);
        this.states.delete(key);
      }
    }
    const open: TrackedIncident[] = [];
    for (const state of this.states.values()) if (state.open) open.push(snapshot(state));
    open.sort((a, b) => a.since - b.since || a.index - b.index);
    return { streaks, open, opened, cleared, clearedWithoutEvidence };
  }

  /**
   * Follows a retirement of a growing universe: states move to their shards' new indices;
   * those of retired shards are dropped, and the open incidents among them are returned
   * (they end: the shard stopped reporting). O(tracked).
   */
  follow(indexAfter: Int32Array): TrackedIncident[] {
    const ended: TrackedIncident[] = [];
    const moved: ShardState[] = [];
    for (const state of this.states.values()) {
      const at = state.index < indexAfter.length ? indexAfter[state.index] : -1;
      if (at >= 0) moved.push({ ...state, index: at });
      else if (state.open) ended.push(snapshot(state));
    }
    this.states.clear();
    for (const state of moved) this.states.set(trackingKey(state.index, state.finding), state);
    return ended;
  }
}

function snapshot(state: ShardState): TrackedIncident {
  return { index: state.index, finding: state.finding, since: state.since, test: state.test };
}
