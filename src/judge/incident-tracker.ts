/**
 * Persistence: a shard's finding becomes an incident only after it holds in `confirm`
 * consecutive windows, and clears after `clear` consecutive clean windows (MODEL.md,
 * "Verdicts"). One chance rejection at alpha is common over a day of windows; the same
 * shard rejecting k windows in a row by chance is about alpha^k as likely.
 *
 * A window with too little traffic is no evidence either way: it neither extends a clean
 * run nor breaks a streak (a lull must not clear a hotspot, nor silence open one), unless
 * the shard is flagged in it. Memory holds only shards flagged now or in an open incident.
 */

/** What was found on a shard. */
export type ShardFinding = 'hotspot' | 'cold';

/** An open incident, in universe indices and epoch ms (the judge names and formats it). */
export interface TrackedIncident {
  readonly index: number;
  readonly finding: ShardFinding;
  /** Start of the first window of the run that opened it, epoch ms. */
  readonly since: number;
}

/** The tracker's answer for one window. */
export interface PersistenceUpdate {
  /** Streak of each shard flagged in this window, by {@link trackingKey}. */
  readonly streaks: ReadonlyMap<number, number>;
  readonly open: readonly TrackedIncident[];
  readonly opened: readonly TrackedIncident[];
  readonly cleared: readonly TrackedIncident[];
}

interface ShardState {
  readonly index: number;
  readonly finding: ShardFinding;
  streak: number;
  cleanRun: number;
  open: boolean;
  since: number;
}

/** Key of (shard, finding): the index doubled, plus one for cold. */
export function trackingKey(index: number, finding: ShardFinding): number {
  return index * 2 + (finding === 'cold' ? 1 : 0);
}

export class IncidentTracker {
  private readonly confirm: number;
  private readonly clear: number;
  private readonly states = new Map<number, ShardState>();

  /**
   * @param confirm `--confirm`, consecutive flagged windows that open an incident
   * @param clear `--clear`, consecutive clean windows that clear one
   */
  constructor(confirm: number, clear: number) {
    this.confirm = confirm;
    this.clear = clear;
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
   * O(flagged + tracked).
   */
  update(
    windowStart: number,
    hot: readonly number[],
    cold: readonly number[],
    noEvidence: boolean,
  ): PersistenceUpdate {
    const flaggedNow = new Set<number>();
    const streaks = new Map<number, number>();
    const opened: TrackedIncident[] = [];
    const cleared: TrackedIncident[] = [];
    const mark = (index: number, finding: ShardFinding) => {
      const key = trackingKey(index, finding);
      flaggedNow.add(key);
      let state = this.states.get(key);
      if (state === undefined) {
        state = { index, finding, streak: 0, cleanRun: 0, open: false, since: windowStart };
        this.states.set(key, state);
      }
      if (state.streak === 0 && !state.open) state.since = windowStart;
      state.streak++;
      state.cleanRun = 0;
      if (!state.open && state.streak >= this.confirm) {
        state.open = true;
        opened.push(snapshot(state));
      }
      streaks.set(key, state.streak);
    };
    for (const index of hot) mark(index, 'hotspot');
    for (const index of cold) mark(index, 'cold');
    if (!noEvidence) {
      for (const [key, state] of this.states) {
        if (flaggedNow.has(key)) continue;
        state.streak = 0;
        if (!state.open) {
          this.states.delete(key);
          continue;
        }
        state.cleanRun++;
        if (state.cleanRun >= this.clear) {
          cleared.push(snapshot(state));
          this.states.delete(key);
        }
      }
    }
    const open: TrackedIncident[] = [];
    for (const state of this.states.values()) if (state.open) open.push(snapshot(state));
    open.sort((a, b) => a.since - b.since || a.index - b.index);
    return { streaks, open, opened, cleared };
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
  return { index: state.index, finding: state.finding, since: state.since };
}
