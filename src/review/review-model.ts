import type { JudgeSettings } from '../judge/judge-settings.js';
import type { Finding, Incident, Judgement } from '../judge/judgement.js';
import {
  loadHistogram,
  loadHistogramRange,
  type LoadHistogram,
} from '../judge/spread-histogram.js';
import { EpisodeFinder, type Episode } from './episodes.js';
import { HeatGrid } from './heat-grid.js';
import type { ReviewWindow } from './review-window.js';

/** The findings in the order of the verdict stream. */
export const findingOrder: readonly Finding[] = [
  'hotspot',
  'cold',
  'uneven',
  'chance',
  'too little traffic',
];

/** What the verdicts rested on, for the method section: the judge's settings and the windows'. */
export interface ReviewSettings extends Omit<JudgeSettings, 'null' | 'spread'> {
  readonly null: string;
  readonly spread: string;
  readonly windowMs: number;
  /** False when the universe grew as shards reported (cold tests off). */
  readonly declaredUniverse: boolean;
}

/** Per-window series, one entry per judged window, in start order. */
export interface WindowSeries {
  readonly start: Float64Array;
  readonly end: Float64Array;
  readonly requests: Float64Array;
  /** The fullest shard's relative load (NaN without requests). */
  readonly fullest: Float64Array;
  /** Chance ceiling as a relative load (NaN without requests). */
  readonly ceiling: Float64Array;
  readonly fullestP: Float64Array;
  /** NaN when the cold tests are off. */
  readonly emptiestP: Float64Array;
  readonly spreadP: Float64Array;
  /** Bit i set when findingOrder[i] holds. */
  readonly findings: Uint8Array;
}

/** The window of strongest evidence, with its spread beside the random-placement prediction. */
export interface PeakWindow {
  readonly start: number;
  readonly end: number;
  readonly judgement: Judgement;
  readonly histogram: LoadHistogram;
}

/** Everything a report shows; built by {@link ReviewBuilder}. */
export interface ReviewModel {
  /** Where the windows came from, in words. */
  readonly source: string;
  /** True when the windows were judged here (not the verdicts a recording carried). */
  readonly judgedHere: boolean;
  readonly settings: ReviewSettings;
  readonly windows: number;
  readonly requests: number;
  /** Most shards in a window. */
  readonly shards: number;
  readonly from: number;
  readonly to: number;
  readonly findingWindows: Readonly<Record<Finding, number>>;
  readonly failoverWindows: number;
  readonly episodes: readonly Episode[];
  readonly incidentsOpened: readonly Incident[];
  readonly series: WindowSeries;
  readonly heat: {
    readonly columns: readonly { readonly start: number; readonly end: number }[];
    readonly rows: readonly { readonly shard: string; readonly means: readonly number[] }[];
  };
  readonly peak: PeakWindow | null;
  readonly falseIncidentsPerDay: number;
  /** Notes from reading and judging (torn lines, cold tests off, ...), each once. */
  readonly notes: readonly string[];
}

/** Shards in the heat strip at most. */
const heatRows = 12;
/** Inner bins of the peak window's histogram. */
const histogramBins = 24;
const mostNotes = 20;

/**
 * Builds the review of a stream of judged windows one window at a time. Memory holds the
 * per-window series (about 80 bytes per window), the heat grid (O(m x 128)), the open
 * episodes and one copy of the peak window's counts: never all the count vectors. O(m) per
 * window, plus one histogram at the end.
 */
export class ReviewBuilder {
  private readonly source: string;
  private readonly judgedHere: boolean;
  private readonly settings: ReviewSettings;
  private readonly episodes: EpisodeFinder;
  private readonly heat = new HeatGrid();
  private readonly notes = new Set<string>();
  private readonly incidents: Incident[] = [];
  private readonly findingWindows: Record<Finding, number> = {
    hotspot: 0,
    cold: 0,
    uneven: 0,
    chance: 0,
    'too little traffic': 0,
  };
  private failovers = 0;
  private count = 0;
  private requests = 0;
  private shards = 0;
  private columns = new GrowingColumns();
  private relative = new Float64Array(0);
  private peakSpread = new Float64Array(0);
  private peakExcess = new Float64Array(0);
  private peakRank: [number, number] = [-1, -Infinity];
  private peak: {
    window: Omit<ReviewWindow, 'counts' | 'shares'>;
    counts: Float64Array;
    shares: Float64Array | null;
  } | null = null;
  private lastIds: readonly string[] = [];
  private falseIncidentsPerDay = 0;

  constructor(options: { source: string; judgedHere: boolean; settings: ReviewSettings }) {
    this.source = options.source;
    this.judgedHere = options.judgedHere;
    this.settings = options.settings;
    // An episode bridges what would not clear an incident: fewer than --clear clean windows.
    this.episodes = new EpisodeFinder(Math.max(0, options.settings.clear - 1));
  }

  /** A note to show with the report (reading problems, re-windowing), kept once. */
  note(text: string): void {
    if (this.notes.size < mostNotes) this.notes.add(text);
  }

  add(window: ReviewWindow): void {
    const judgement = window.judgement;
    const m = window.counts.length;
    this.count++;
    this.requests += window.total;
    this.shards = Math.max(this.shards, m);
    if (window.shardIds !== this.lastIds) this.followIds(window.shardIds);
    this.lastIds = window.shardIds;
    this.falseIncidentsPerDay = judgement.falseIncidentsPerDay;
    for (const text of judgement.notes) {
      // Baseline progress changes every window; its first words are the note. Other progress
      // counts ("spread learning (3 of 10 windows)") read as one note over those windows.
      this.note(
        text.startsWith('baseline learning')
          ? baselineNote
          : text.replace(/\((\d+) of (\d+) windows\)/, '(while the first $2 windows are learned)'),
      );
    }
    let bits = 0;
    findingOrder.forEach((finding, at) => {
      if (judgement.findings.includes(finding)) {
        bits |= 1 << at;
        this.findingWindows[finding]++;
      }
    });
    if (judgement.pattern === 'failover') this.failovers++;
    this.incidents.push(...judgement.opened);
    const withRequests = judgement.fullest !== null;
    this.columns.push(
      window.start,
      window.end,
      window.total,
      withRequests ? judgement.fullest.relative : Number.NaN,
      withRequests ? judgement.ceiling.relative : Number.NaN,
      withRequests ? (judgement.fullest.p ?? Number.NaN) : Number.NaN,
      judgement.emptiest?.p ?? Number.NaN,
      withRequests ? judgement.spread.p : Number.NaN,
      bits,
    );
    this.episodes.add(window);
    if (this.relative.length < m) this.relative = new Float64Array(m);
    relativeLoads(window, this.relative);
    this.heat.add(window.start, window.end, this.relative, m);
    this.considerPeak(window);
  }

  /**
   * A growing universe that retired ids renumbered its shards: the heat strip's rows move
   * with their ids (a universe that only grew keeps every index). O(m) when the ids change.
   */
  private followIds(ids: readonly string[]): void {
    const previous = this.lastIds;
    let moved = previous.length > ids.length;
    for (let at = 0; at < previous.length && !moved; at++) moved = previous[at] !== ids[at];
    if (!moved) return;
    const indexOf = new Map(ids.map((id, at) => [id, at]));
    this.heat.follow(Int32Array.from(previous, (id) => indexOf.get(id) ?? -1));
  }

  /** The finished model. */
  build(): ReviewModel {
    const heatColumns = this.heat.columns;
    return {
      source: this.source,
      judgedHere: this.judgedHere,
      settings: this.settings,
      windows: this.count,
      requests: this.requests,
      shards: this.shards,
      from: this.count === 0 ? Number.NaN : this.columns.start[0],
      to: this.count === 0 ? Number.NaN : this.columns.end[this.count - 1],
      findingWindows: { ...this.findingWindows },
      failoverWindows: this.failovers,
      episodes: this.episodes.episodes(),
      incidentsOpened: [...this.incidents],
      series: this.columns.series(),
      heat: {
        columns: heatColumns,
        rows: this.heatRows().map((shard) => ({
          shard: this.lastIds[shard] ?? String(shard),
          means: this.heat.means(shard),
        })),
      },
      peak: this.peakWindow(),
      falseIncidentsPerDay: this.falseIncidentsPerDay,
      notes: [...this.notes],
    };
  }

  /**
   * The heat strip's shards: those of per-shard episodes first (by episode order), then
   * those with the highest mean load in any column, up to 12.
   */
  private heatRows(): number[] {
    const index = new Map(this.lastIds.map((id, at) => [id, at]));
    const rows: number[] = [];
    for (const episode of this.episodes.episodes()) {
      const at = episode.shard === null ? undefined : index.get(episode.shard);
      if (at !== undefined && !rows.includes(at) && rows.length < heatRows) rows.push(at);
    }
    const peaks: { shard: number; peak: number }[] = [];
    // The shards of the last window: after a retirement, indices past them hold no shard.
    for (let shard = 0; shard < Math.min(this.shards, this.lastIds.length); shard++) {
      if (rows.includes(shard)) continue;
      peaks.push({ shard, peak: Math.max(...this.heat.means(shard)) });
    }
    peaks.sort((a, b) => b.peak - a.peak || a.shard - b.shard);
    for (const { shard } of peaks) {
      if (rows.length >= heatRows) break;
      rows.push(shard);
    }
    return rows;
  }

  /**
   * Keeps the window of strongest evidence: among windows with a hotspot or cold finding
   * the smallest p-value of the fullest/emptiest tests, ties to the larger distance of the
   * extreme shard from its fair share; without any, the fullest shard's highest load in a
   * window with enough traffic to judge.
   */
  private considerPeak(window: ReviewWindow): void {
    const judgement = window.judgement;
    if (judgement.fullest === null) return;
    const flaggedWindow =
      judgement.findings.includes('hotspot') || judgement.findings.includes('cold');
    const judgeable = !judgement.findings.includes('too little traffic');
    const least = Math.min(judgement.fullest.p ?? 1, judgement.emptiest?.p ?? 1);
    const distance = Math.max(
      judgement.fullest.relative - 1,
      1 - (judgement.emptiest?.relative ?? 1),
    );
    const rank: [number, number] = flaggedWindow
      ? [2, -Math.log10(Math.max(least, 1e-300)) + distance * 1e-3]
      : judgeable
        ? [1, judgement.fullest.relative]
        : [0, judgement.fullest.relative];
    if (rank[0] < this.peakRank[0] || (rank[0] === this.peakRank[0] && rank[1] <= this.peakRank[1]))
      return;
    this.peakRank = rank;
    const m = window.counts.length;
    if (this.peakSpread.length < m) this.peakSpread = new Float64Array(m);
    this.peakSpread.set(window.counts);
    let shares: Float64Array | null = null;
    if (window.shares !== null) {
      if (this.peakExcess.length < m) this.peakExcess = new Float64Array(m);
      this.peakExcess.set(window.shares.subarray(0, m));
      shares = this.peakExcess.subarray(0, m);
    }
    this.peak = {
      window: {
        start: window.start,
        end: window.end,
        total: window.total,
        shardIds: window.shardIds,
        judgement,
      },
      counts: this.peakSpread.subarray(0, m),
      shares,
    };
  }

  private peakWindow(): PeakWindow | null {
    if (this.peak === null) return null;
    const { window, counts, shares } = this.peak;
    const judgement = window.judgement;
    const range = loadHistogramRange(judgement.ceiling.relative, judgement.floor?.relative ?? null);
    const { low, high } = range;
    return {
      start: window.start,
      end: window.end,
      judgement,
      histogram: loadHistogram({
        counts,
        total: window.total,
        judgedTotal: judgement.judgedRequests,
        shares,
        low,
        high,
        bins: histogramBins,
      }),
    };
  }
}

const baselineNote =
  'baseline learning: until enough windows are learned the declared shares are the null';

/** Relative loads x_i / (N p_i) of a window into `out` (0 for a window without requests). */
function relativeLoads(window: ReviewWindow, out: Float64Array): void {
  const m = window.counts.length;
  if (window.total === 0) {
    out.fill(0, 0, m);
    return;
  }
  let sum = 0;
  if (window.shares !== null) for (let i = 0; i < m; i++) sum += window.shares[i];
  for (let shard = 0; shard < m; shard++) {
    const share = window.shares === null ? 1 / m : window.shares[shard] / sum;
    out[shard] = window.counts[shard] / (window.total * share);
  }
}

/** Typed-array columns that double as they fill. */
class GrowingColumns {
  private size = 0;
  start = new Float64Array(256);
  end = new Float64Array(256);
  private requests = new Float64Array(256);
  private fullest = new Float64Array(256);
  private ceiling = new Float64Array(256);
  private fullestP = new Float64Array(256);
  private emptiestP = new Float64Array(256);
  private spreadP = new Float64Array(256);
  private findings = new Uint8Array(256);

  push(...values: number[]): void {
    if (this.size === this.start.length) this.grow();
    const at = this.size++;
    [
      this.start[at],
      this.end[at],
      this.requests[at],
      this.fullest[at],
      this.ceiling[at],
      this.fullestP[at],
      this.emptiestP[at],
      this.spreadP[at],
      this.findings[at],
    ] = values;
  }

  series(): WindowSeries {
    const n = this.size;
    return {
      start: this.start.slice(0, n),
      end: this.end.slice(0, n),
      requests: this.requests.slice(0, n),
      fullest: this.fullest.slice(0, n),
      ceiling: this.ceiling.slice(0, n),
      fullestP: this.fullestP.slice(0, n),
      emptiestP: this.emptiestP.slice(0, n),
      spreadP: this.spreadP.slice(0, n),
      findings: this.findings.slice(0, n),
    };
  }

  private grow(): void {
    const twice = <T extends Float64Array | Uint8Array>(array: T): T => {
      const grown = new (array.constructor as new (length: number) => T)(array.length * 2);
      grown.set(array);
      return grown;
    };
    this.start = twice(this.start);
    this.end = twice(this.end);
    this.requests = twice(this.requests);
    this.fullest = twice(this.fullest);
    this.ceiling = twice(this.ceiling);
    this.fullestP = twice(this.fullestP);
    this.emptiestP = twice(this.emptiestP);
    this.spreadP = twice(this.spreadP);
    this.findings = twice(this.findings);
  }
}
