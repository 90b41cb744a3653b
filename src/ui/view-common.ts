import type { Finding, Judgement } from '../judge/judgement.js';
import type { ShardCandidate } from '../judge/shard-candidates.js';
import type { LoadHistogram } from '../judge/spread-histogram.js';
import { wireLabel } from './terminal-text.js';

/*
 * What every panel's view model shares: the controller's state and the layout they are built
 * from, the tones, and the symbols and words for a window's state.
 */

/** How the shard table is ordered (the `s` key cycles through them). */
export type ShardSort = 'evidence' | 'load' | 'shard';
export const shardSorts: readonly ShardSort[] = ['evidence', 'load', 'shard'];

/** Colour families; every one also has a word or a symbol on screen. */
export type Tone =
  'hotspot' | 'cold' | 'failover' | 'uneven' | 'chance' | 'easing' | 'thin' | 'muted' | 'plain';

/** The terminal, in cells. */
export interface TerminalSize {
  readonly columns: number;
  readonly rows: number;
}

/** What the screen knows about the run, fixed when it starts. */
export interface ScreenContext {
  /** The source in words, e.g. `scenario demo (seed 1)` or `file counts.jsonl` (escaped here). */
  readonly sourceLabel: string;
  readonly windowMs: number;
  readonly latenessMs: number;
  /** `--confirm`: the streak that opens an incident. */
  readonly confirm: number;
  /** `--clear`: consecutive clean windows that clear an open incident. */
  readonly clear: number;
  /** `--max-detectable`: the detectable excess above which a window has too little traffic. */
  readonly maxDetectable: number;
}

/** The state of the source, in one word the screen shows beside its symbol. */
export type SourceState =
  'connecting' | 'connected' | 'reading' | 'quiet' | 'disconnected' | 'ended';

/** The source as last measured (see SourceMeter). */
export interface SourceReading {
  readonly state: SourceState;
  /** Requests per second (the counts the records carry) over the last few seconds; null before two readings. */
  readonly requestsPerSecond: number | null;
  /** Records per second over the same span; null before two readings. */
  readonly recordsPerSecond: number | null;
  /** Wall clock minus the newest record's event time; null before any record. */
  readonly lagMs: number | null;
  /** Wall time since a record last arrived; null before any record. */
  readonly lastRecordAgeMs: number | null;
  readonly records: number;
  readonly rejected: number;
  /** Units of load that arrived after their window had closed. */
  readonly late: number;
}

/** One judged window, prepared when it closes; frames only pick from it. */
export interface WindowView {
  readonly judgement: Judgement;
  readonly startMs: number;
  readonly endMs: number;
  /** Fine-binned spread (120 inner bins) with its prediction; null without requests. */
  readonly histogram: LoadHistogram | null;
  /** Flagged, fullest, emptiest, the highest and lowest loads and the first ids, unordered. */
  readonly candidates: readonly ShardCandidate[];
  /** False under a ready learned baseline: rows and spread use the declared shares. */
  readonly sharesMatchVerdict: boolean;
}

/** Everything a frame is built from (the controller's state). */
export interface ScreenState {
  readonly context: ScreenContext;
  /** Judged windows, oldest first. */
  readonly windows: readonly WindowView[];
  /** Index into `windows` of the window on show; null follows the newest. */
  readonly selected: number | null;
  readonly paused: boolean;
  readonly sort: ShardSort;
  readonly help: boolean;
  readonly source: SourceReading;
  readonly size: TerminalSize;
}

/** Where the panels go and how big they are, from the terminal size. */
export interface ScreenLayout {
  readonly columns: number;
  /** Lines drawn: one less than the terminal, so the frame never scrolls it. */
  readonly lines: number;
  /** Shards and spread side by side (wide terminals) or stacked. */
  readonly sideBySide: boolean;
  readonly shardPanelWidth: number;
  readonly spreadPanelWidth: number;
  readonly evidenceLines: number;
  readonly shardRows: number;
  readonly chartHeight: number;
  /** Windows the history strip shows at most. */
  readonly historySlots: number;
  /** Width of the history strip's label column. */
  readonly historyLabelWidth: number;
  /** Widest shard id cell. */
  readonly shardIdWidth: number;
  /** Cells of a row's load bar. */
  readonly barWidth: number;
}

/** Fine bins of a window's histogram: divisible by every coarse bin count a frame may pick. */
export const fineBins = 120;
export const coarseBinChoices = [120, 60, 40, 30, 24, 20, 15, 12, 10, 8, 6];
/** Cells per coarse bin in the chart: seen, predicted, gap. */
export const cellsPerBin = 3;
/** Rows kept per window beyond the flagged ones: the most rows any frame shows. */
export const candidateRows = 40;

/**
 * What the screen says of a window: a finding, the failover pattern, or `easing`, the
 * screen's own state for a window within chance while an incident it had opened is still
 * open (it clears only after --clear clean windows in a row).
 */
export type WindowState = Finding | 'failover' | 'easing';

export const findingSymbols: Record<WindowState, string> = {
  hotspot: '▲',
  cold: '▼',
  failover: '◆',
  uneven: '~',
  easing: '↘',
  chance: '·',
  'too little traffic': '?',
};

export const findingTones: Record<WindowState, Tone> = {
  hotspot: 'hotspot',
  cold: 'cold',
  failover: 'failover',
  uneven: 'uneven',
  easing: 'easing',
  chance: 'chance',
  'too little traffic': 'thin',
};

/** The legend of window symbols, in the order of docs/screen.md; shorter forms for narrow lines. */
export const legendItems: readonly { text: string; short: string }[] = [
  { text: '▲ hotspot', short: '▲hot' },
  { text: '▼ cold', short: '▼cold' },
  { text: '◆ failover', short: '◆failover' },
  { text: '~ uneven', short: '~uneven' },
  { text: '↘ easing', short: '↘easing' },
  { text: '· chance', short: '·chance' },
  { text: '? too little traffic', short: '?too little' },
];
export const findingLegend = legendItems.map((item) => item.text).join('  ');

/** A shard id for a sentence: escaped and cut to 24 cells. */
export function label(id: string | undefined): string {
  return id === undefined ? '?' : wireLabel(id, 24);
}
