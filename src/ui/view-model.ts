import type { Finding, Judgement } from '../judge/judgement.js';
import type { KeyCause } from '../judge/key-verdict.js';
import {
  loadHistogram,
  loadHistogramRange,
  type LoadHistogram,
} from '../judge/spread-histogram.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import {
  formatClock,
  formatCount,
  formatDuration,
  formatP,
  formatPlain,
  pStatement,
  formatRate,
  formatRelative,
  formatWindowLength,
} from './display-numbers.js';
import {
  displayWidth,
  fitParts,
  fitWidth,
  padWidth,
  terminalSafe,
  wireLabel,
  type LinePart,
} from './terminal-text.js';

/*
 * The screen's view models and the builders that make them. Components receive these and
 * only lay them out: every number is already a string, every bar already a fraction, every
 * shard id already escaped and cut to its cell. Statistics come from the verdicts and from
 * judge/spread-histogram.ts; this file only selects, orders and words them.
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

/** A shard worth a row, with its numbers (not yet words). */
export interface ShardCandidate {
  /** The id as it came from the wire: escaped only when a row is built. */
  readonly shard: string;
  readonly count: number;
  /** N p_i in requests; null when the shares are not known here (learned baseline). */
  readonly fairShare: number | null;
  readonly relative: number;
  /** Adjusted p: exact for flagged, fullest and emptiest shards, else a bound (see pBound). */
  readonly p: number | null;
  /** '' when p is exact; `≥` when the adjusted p is at least p; `>` when it is above p (alpha). */
  readonly pBound: '' | '≥' | '>';
  readonly finding: 'hotspot' | 'cold' | null;
  readonly streak: number;
  /** An incident is open on this shard with its finding. */
  readonly incident: boolean;
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

export interface HeaderView {
  readonly title: string;
  readonly facts: string;
  /** `LIVE`, `PAUSED` or `ENDED` with its symbol. */
  readonly mode: string;
  readonly modeTone: Tone;
  /** Which window is on show, e.g. `window 12 of 40 · 3 newer`. */
  readonly position: string;
}

export interface VerdictView {
  readonly tone: Tone;
  readonly symbol: string;
  /** The finding in capitals and what it means, e.g. `HOTSPOT on seat-17: ...`. */
  readonly headline: string;
  readonly windowText: string;
  /** One sentence per side of the evidence (fullest; emptiest when cold). */
  readonly evidence: readonly string[];
  /** Null model, spread mode, N_eff and the reminder that this is evidence, not certainty. */
  readonly model: string;
}

/** A load bar, as fractions of the bar's length. */
export interface LoadBar {
  readonly load: number;
  readonly ceiling: number;
  /** Null when the cold tests are off. */
  readonly floor: number | null;
}

export interface ShardRowView {
  readonly mark: string;
  readonly tone: Tone;
  readonly shard: string;
  readonly load: string;
  readonly fair: string;
  readonly relative: string;
  readonly p: string;
  readonly streak: string;
  readonly bar: LoadBar;
}

export interface ShardTableView {
  readonly title: string;
  /** The column names and, over the bars, their scale; fitted to the panel. */
  readonly heading: string;
  readonly rows: readonly ShardRowView[];
  /** Shown instead of rows before the first window. */
  readonly empty: string | null;
}

export interface SpreadBin {
  /** Fractions of the chart height. */
  readonly observed: number;
  readonly expected: number;
  readonly tone: Tone;
}

export interface SpreadView {
  readonly title: string;
  readonly legend: string;
  readonly bins: readonly SpreadBin[];
  /** Composed to the chart's width: edge labels, the fair share and the ceiling. */
  readonly axis: string;
  /** Shown instead of the chart when there is nothing to draw. */
  readonly empty: string | null;
}

export interface HistorySlot {
  /** Fullest shard against the ceiling: 0.5 is at the ceiling, 1 is twice as far past 1x. */
  readonly level: number;
  readonly symbol: string;
  readonly tone: Tone;
  readonly selected: boolean;
}

export interface HistoryView {
  readonly slots: readonly HistorySlot[];
  /** The windows drawn and the legend of the symbols. */
  readonly span: string;
}

export interface IncidentItem {
  readonly symbol: string;
  readonly tone: Tone;
  readonly text: string;
}

export interface IncidentView {
  readonly items: readonly IncidentItem[];
  /** `none open` when empty. */
  readonly none: string | null;
  /** The approximate false-incident rate under random placement; '' when there is no room. */
  readonly falseRate: string;
  /** `+2 more` when not every open incident fits the line, else ''. */
  readonly more: string;
}

export interface SourceView {
  readonly symbol: string;
  readonly state: string;
  readonly tone: Tone;
  readonly facts: string;
}

export interface KeyHint {
  readonly key: string;
  readonly action: string;
}

export interface HelpView {
  readonly title: string;
  readonly keys: readonly KeyHint[];
  readonly panels: readonly { readonly name: string; readonly text: string }[];
}

/** One frame of the screen. */
export interface ScreenModel {
  readonly layout: ScreenLayout;
  readonly header: HeaderView;
  readonly verdict: VerdictView;
  readonly shards: ShardTableView;
  readonly spread: SpreadView;
  readonly history: HistoryView;
  readonly incidents: IncidentView;
  readonly source: SourceView;
  readonly keys: readonly KeyHint[];
  /** The help overlay, when open: it takes the place of the panels. */
  readonly help: HelpView | null;
}

/** Fine bins of a window's histogram: divisible by every coarse bin count a frame may pick. */
const fineBins = 120;
const coarseBinChoices = [120, 60, 40, 30, 24, 20, 15, 12, 10, 8, 6];
/** Cells per coarse bin in the chart: seen, predicted, gap. */
export const cellsPerBin = 3;
/** Rows kept per window beyond the flagged ones: the most rows any frame shows. */
const candidateRows = 40;

/**
 * What the screen says of a window: a finding, the failover pattern, or `easing`, the
 * screen's own state for a window within chance while an incident it had opened is still
 * open (it clears only after --clear clean windows in a row).
 */
type WindowState = Finding | 'failover' | 'easing';

const findingSymbols: Record<WindowState, string> = {
  hotspot: '▲',
  cold: '▼',
  failover: '◆',
  uneven: '~',
  easing: '↘',
  chance: '·',
  'too little traffic': '?',
};

const findingTones: Record<WindowState, Tone> = {
  hotspot: 'hotspot',
  cold: 'cold',
  failover: 'failover',
  uneven: 'uneven',
  easing: 'easing',
  chance: 'chance',
  'too little traffic': 'thin',
};

/** The legend of window symbols, in the order of docs/screen.md; shorter forms for narrow lines. */
const legendItems: readonly { text: string; short: string }[] = [
  { text: '▲ hotspot', short: '▲hot' },
  { text: '▼ cold', short: '▼cold' },
  { text: '◆ failover', short: '◆failover' },
  { text: '~ uneven', short: '~uneven' },
  { text: '↘ easing', short: '↘easing' },
  { text: '· chance', short: '·chance' },
  { text: '? too little traffic', short: '?too little' },
];
const findingLegend = legendItems.map((item) => item.text).join('  ');

/**
 * Prepares one judged window for the screen: the spread histogram with its prediction and
 * the shards worth a row. Called once per window (O(m) plus the histogram's tails).
 *
 * @param shares the declared shares (null for equal shares); the uniform null ignores them
 * @param idAt the shard id at an index of the window's counts
 */
export function buildWindowView(
  window: ClosedWindow,
  judgement: Judgement,
  shares: ArrayLike<number> | null,
  idAt: (index: number) => string,
): WindowView {
  const m = window.counts.length;
  const used = judgement.null === 'uniform' ? null : shares;
  const sharesMatchVerdict = !(judgement.null === 'baseline' && judgement.baseline?.ready === true);
  const base = { judgement, startMs: window.start, endMs: window.end, sharesMatchVerdict };
  if (judgement.fullest === null || m === 0 || window.total === 0) {
    return { ...base, histogram: null, candidates: [] };
  }
  const range = loadHistogramRange(judgement.ceiling.relative, judgement.floor?.relative ?? null);
  const histogram = loadHistogram({
    counts: window.counts,
    total: window.total,
    judgedTotal: judgement.judgedRequests,
    shares: used,
    low: range.low,
    high: range.high,
    bins: fineBins,
  });
  return {
    ...base,
    histogram,
    candidates: candidatesOf(window, judgement, used, idAt, sharesMatchVerdict),
  };
}

function candidatesOf(
  window: ClosedWindow,
  judgement: Judgement,
  shares: ArrayLike<number> | null,
  idAt: (index: number) => string,
  sharesMatchVerdict: boolean,
): ShardCandidate[] {
  const counts = window.counts;
  const m = counts.length;
  const n = window.total;
  let shareSum = 0;
  if (shares !== null) for (let shard = 0; shard < m; shard++) shareSum += shares[shard];
  const fairOf = (shard: number) =>
    shares === null || !(shareSum > 0) ? n / m : (n * shares[shard]) / shareSum;
  const open = new Set(
    judgement.incidents.map((incident) => `${incident.finding} ${incident.shard}`),
  );
  const fullestP = judgement.fullest?.p ?? null;
  const emptiestP = judgement.emptiest?.p ?? null;
  const byId = new Map<string, ShardCandidate>();
  const indexOf = new Map<string, number>();

  for (const flagged of judgement.flagged) {
    byId.set(flagged.shard, {
      shard: flagged.shard,
      count: flagged.count,
      fairShare: null,
      relative: flagged.relative,
      p: flagged.p,
      pBound: '',
      finding: flagged.finding,
      streak: flagged.streak,
      incident: open.has(`${flagged.finding} ${flagged.shard}`),
    });
  }
  for (const [extreme, p] of [
    [judgement.fullest, fullestP],
    [judgement.emptiest, emptiestP],
  ] as const) {
    if (extreme === null || byId.has(extreme.shard)) continue;
    byId.set(extreme.shard, {
      shard: extreme.shard,
      count: extreme.count,
      fairShare: null,
      relative: extreme.relative,
      p,
      pBound: '',
      finding: null,
      streak: 0,
      incident: false,
    });
  }
  if (sharesMatchVerdict) {
    // The highest and lowest relative loads and the first ids, by one pass keeping three
    // short sorted lists: every sort of the table chooses its rows from all shards.
    const high: { shard: number; relative: number }[] = [];
    const low: { shard: number; relative: number }[] = [];
    const first: { shard: number; id: string }[] = [];
    for (let shard = 0; shard < m; shard++) {
      const relative = counts[shard] / fairOf(shard);
      keepBest(high, { shard, relative }, candidateRows, (a, b) => b.relative - a.relative);
      keepBest(low, { shard, relative }, candidateRows, (a, b) => a.relative - b.relative);
      keepBest(first, { shard, id: idAt(shard) }, candidateRows, (a, b) => compareIds(a.id, b.id));
    }
    for (const { shard } of [...high, ...low, ...first]) {
      const id = idAt(shard);
      indexOf.set(id, shard);
      if (byId.has(id)) continue;
      const relative = counts[shard] / fairOf(shard);
      byId.set(id, {
        shard: id,
        count: counts[shard],
        fairShare: null,
        relative,
        ...unflaggedP(relative, judgement),
        finding: null,
        streak: 0,
        incident: false,
      });
    }
  }
  return [...byId.values()].map((candidate) => {
    const index = indexOf.get(candidate.shard);
    const fairShare =
      index !== undefined
        ? fairOf(index)
        : candidate.relative > 0
          ? candidate.count / candidate.relative
          : judgement.ceiling.requests === null
            ? null
            : n / m;
    return { ...candidate, fairShare };
  });
}

/**
 * What is known of the adjusted p of a shard that is neither flagged nor an extreme. On the
 * hot side it is P(max r >= r_i), at least the fullest's p (a lower load); on the cold side
 * at least the emptiest's. And a load below the chance ceiling, the (1 - alpha) quantile of
 * the fullest's, has P(max r >= r_i) > alpha (above the floor, P(min r <= r_i) > alpha). The
 * stronger of the two is shown: `≥0.207` from an extreme within chance, else `>0.001` for a
 * shard within chance, so a healthy shard never borrows an overwhelming p from a hotspot.
 */
function unflaggedP(relative: number, j: Judgement): Pick<ShardCandidate, 'p' | 'pBound'> {
  const hotSide = relative >= 1;
  const extremeP = hotSide ? (j.fullest?.p ?? null) : j.coldTests ? (j.emptiest?.p ?? null) : null;
  const level = hotSide ? j.ceiling.relative : (j.floor?.relative ?? null);
  const withinChance = level !== null && (hotSide ? relative < level : relative > level);
  // A bound at the engine's reporting floor says nothing.
  const usefulExtreme = extremeP !== null && extremeP > 1e-300 ? extremeP : null;
  if (usefulExtreme !== null && (usefulExtreme > j.alpha || !withinChance)) {
    return { p: usefulExtreme, pBound: '≥' };
  }
  if (withinChance) return { p: j.alpha, pBound: '>' };
  return { p: null, pBound: '' };
}

/** Shard ids in reading order: `seat-2` before `seat-10`. */
const idCollator = new Intl.Collator('en', { numeric: true });
function compareIds(a: string, b: string): number {
  return idCollator.compare(a, b);
}

function keepBest<T>(list: T[], item: T, size: number, order: (a: T, b: T) => number): void {
  if (list.length === size && order(item, list[list.length - 1]) >= 0) return;
  let at = list.length;
  while (at > 0 && order(item, list[at - 1]) < 0) at--;
  list.splice(at, 0, item);
  if (list.length > size) list.pop();
}

/**
 * Where the panels go. One line and one column are left free: the frame never scrolls
 * the terminal, and a line can never run into its edge unseen. Stacked up to 158 drawn
 * columns, shards beside the spread from there, where the shard panel still gives each
 * load bar more cells than an 80-column screen does. At 80x24 the table keeps 4 rows and
 * the chart 3; more lines go to both, more columns to the history and the bars.
 */
export function screenLayout(size: TerminalSize): ScreenLayout {
  const columns = Math.max(40, size.columns) - 1;
  const lines = Math.max(12, size.rows - 1);
  const sideBySide = columns >= 159;
  const evidenceLines = 2;
  const historyLines = 4;
  // header, verdict headline, evidence, model line, history, incidents, source, keys
  const fixed = 1 + 1 + evidenceLines + 1 + historyLines + 1 + 1 + 1;
  let shardRows: number;
  let chartHeight: number;
  let shardPanelWidth: number;
  let spreadPanelWidth: number;
  if (sideBySide) {
    const body = Math.max(3, lines - fixed);
    shardRows = Math.max(1, Math.min(candidateRows, body - 2));
    chartHeight = Math.max(1, Math.min(16, body - 2));
    shardPanelWidth = Math.floor(columns * 0.55);
    spreadPanelWidth = columns - shardPanelWidth - 1;
  } else {
    const body = Math.max(2, lines - fixed - 4);
    shardRows = Math.max(1, Math.min(candidateRows, Math.ceil(body * 0.55)));
    chartHeight = Math.max(1, Math.min(16, body - shardRows));
    shardRows = Math.min(candidateRows, body - chartHeight);
    shardPanelWidth = columns;
    spreadPanelWidth = columns;
  }
  const shardIdWidth = shardPanelWidth >= 100 ? 20 : 12;
  const historyLabelWidth = 11;
  return {
    columns,
    lines,
    sideBySide,
    shardPanelWidth,
    spreadPanelWidth,
    evidenceLines,
    shardRows,
    chartHeight,
    historySlots: Math.max(8, columns - historyLabelWidth),
    historyLabelWidth,
    shardIdWidth,
    barWidth: Math.max(8, shardPanelWidth - shardRowCells(shardIdWidth)),
  };
}

/** Cells of the shard table's number columns, in order after the mark and the id. */
export const shardColumns = { load: 7, fair: 8, relative: 7, p: 10, streak: 6 } as const;

/** Cells of a shard row before its bar: mark, id, the number columns, the spaces between. */
export function shardRowCells(idWidth: number): number {
  const { load, fair, relative, p, streak } = shardColumns;
  return 1 + idWidth + 1 + load + fair + relative + p + 1 + streak + 1;
}

/** The keys, as the bottom line and the help show them. */
function keyHints(state: ScreenState, layout: ScreenLayout): readonly KeyHint[] {
  const next = shardSorts[(shardSorts.indexOf(state.sort) + 1) % shardSorts.length];
  const hints: KeyHint[] = [
    { key: 'p', action: state.paused ? 'resume' : 'pause' },
    { key: '← →', action: 'step windows' },
    { key: 's', action: `sort by ${next}` },
    { key: '?', action: 'help' },
    { key: 'q', action: 'quit' },
  ];
  // Whole hints only; help and quit are the last to go (the help lists every key).
  const widthOf = (list: readonly KeyHint[]) =>
    displayWidth(`${keyLineLabel}${list.map((hint) => `${hint.key} ${hint.action}`).join('   ')}`);
  while (widthOf(hints) > layout.columns && hints.length > 2) hints.splice(hints.length - 3, 1);
  return hints;
}

/** What the key line starts with. */
export const keyLineLabel = 'keys › ';

/** Builds one frame from the controller's state. O(rows + bins + history) per frame. */
export function buildScreenModel(state: ScreenState): ScreenModel {
  const layout = screenLayout(state.size);
  const shownIndex =
    state.windows.length === 0
      ? null
      : Math.min(state.selected ?? state.windows.length - 1, state.windows.length - 1);
  const shown = shownIndex === null ? null : state.windows[shownIndex];
  return {
    layout,
    header: headerView(state, shownIndex, layout),
    verdict:
      shown === null
        ? waitingVerdict(state.context, layout)
        : verdictView(shown, state.context, layout),
    shards: shardTableView(shown, state.sort, layout, state.context),
    spread: spreadView(shown, layout),
    history: historyView(state.windows, shownIndex, layout),
    incidents: incidentView(shown, layout),
    source: sourceView(state.source, layout),
    keys: keyHints(state, layout),
    help: state.help ? helpView(state.context) : null,
  };
}

function headerView(
  state: ScreenState,
  shownIndex: number | null,
  layout: ScreenLayout,
): HeaderView {
  const latest = state.windows.at(-1)?.judgement;
  const ended = state.source.state === 'ended';
  const mode = state.paused
    ? { mode: '‖ PAUSED', modeTone: 'uneven' as Tone }
    : ended
      ? { mode: '■ ENDED', modeTone: 'muted' as Tone }
      : { mode: '● LIVE', modeTone: 'chance' as Tone };
  let position = 'waiting for the first window';
  if (shownIndex !== null) {
    const newer = state.windows.length - 1 - shownIndex;
    position =
      newer === 0
        ? `newest of ${state.windows.length}`
        : `window ${shownIndex + 1} of ${state.windows.length} · ${newer} newer`;
  }
  const room = layout.columns - displayWidth(`${mode.mode} · ${position}`) - 1;
  const parts: LinePart[] = [
    { text: terminalSafe(state.context.sourceLabel), rank: 3 },
    ...(latest === undefined ? [] : [{ text: `${latest.shards} shards`, rank: 2 }]),
    {
      text: `${formatWindowLength(state.context.windowMs)} windows`,
      short: `${formatWindowLength(state.context.windowMs)} win`,
      rank: 1,
    },
    ...(latest === undefined
      ? []
      : [{ text: `alpha ${latest.alpha}`, short: `α ${latest.alpha}`, rank: 0 }]),
  ];
  // The program's name goes first when the room runs short; the facts stay whole.
  const title = 'shardwise';
  const full = parts.map((part) => part.text).join(' · ');
  const withTitle = displayWidth(`${title} · ${full}`) <= room;
  return {
    title: withTitle ? title : '',
    facts: withTitle ? full : fitParts(parts, room),
    ...mode,
    position,
  };
}

function waitingVerdict(context: ScreenContext, layout: ScreenLayout): VerdictView {
  return {
    tone: 'muted',
    symbol: '○',
    headline: 'WAITING for the first window to close',
    windowText: '',
    evidence: [
      fitParts(
        [
          {
            text: `A window closes ${formatWindowLength(context.windowMs)} after it starts plus ${formatWindowLength(context.latenessMs)} of lateness`,
            rank: 0,
          },
          { text: 'its verdict appears here', rank: 1 },
        ],
        layout.columns,
        '; ',
      ),
    ],
    model: 'Verdicts are statistical evidence, not certainty.',
  };
}

function verdictView(view: WindowView, context: ScreenContext, layout: ScreenLayout): VerdictView {
  const j = view.judgement;
  const width = layout.columns;
  const wide = width >= 100;
  const span = `${formatClock(view.startMs)}–${formatClock(view.endMs)}`;
  const windowText = wide ? `window ${span} UTC` : span;
  const hot = j.flagged.find((shard) => shard.finding === 'hotspot');
  const cold = j.flagged.find((shard) => shard.finding === 'cold');
  const lead = j.findings[0];
  // Back within chance while an incident is still open: the incident is easing, not over.
  const easing = lead === 'chance' && j.pattern === null && j.incidents.length > 0;
  const key: WindowState = easing ? 'easing' : (j.pattern ?? lead);
  let core: string;
  let meaning: string;
  let joiner = ': ';
  if (j.pattern === 'failover') {
    joiner = ', ';
    core = `FAILOVER: ${label(cold?.shard ?? j.emptiest?.shard)} went cold`;
    meaning = `${label(hot?.shard ?? j.fullest?.shard)} took its traffic`;
  } else if (easing) {
    const first = j.incidents[0];
    core = `EASING: ${j.incidents.length === 1 ? `${first.finding} on ${label(first.shard)}` : `${j.incidents.length} incidents`} still open`;
    meaning = `this window is within chance; clears after ${context.clear} clean windows in a row`;
    joiner = '; ';
  } else if (lead === 'hotspot') {
    core = `HOTSPOT on ${label(hot?.shard ?? j.fullest?.shard)}`;
    meaning = 'hotter than random placement allows';
  } else if (lead === 'cold') {
    core = `COLD: ${label(cold?.shard ?? j.emptiest?.shard)}`;
    meaning = 'gets less than chance allows';
    joiner = ' ';
  } else if (lead === 'uneven') {
    core = 'UNEVEN';
    meaning = 'wider spread than chance, no shard stands out';
  } else if (lead === 'chance') {
    core = 'CHANCE';
    meaning = 'the skew is what random placement gives';
  } else {
    core = 'TOO LITTLE TRAFFIC';
    meaning = 'a hotspot could not be told from chance';
  }
  const named: readonly Finding[] = j.pattern === 'failover' ? ['hotspot', 'cold'] : [lead];
  const also = j.findings.filter((finding) => !named.includes(finding));
  const symbol = findingSymbols[key];
  // The headline shares its line with the window span: the meaning goes before the "also".
  const room = width - displayWidth(windowText) - 1 - displayWidth(symbol) - 1;
  const alsoText = also.length > 0 ? ` (also ${also.join(', ')})` : '';
  const headline =
    [`${core}${joiner}${meaning}${alsoText}`, `${core}${alsoText}`, core].find(
      (text) => displayWidth(text) <= room,
    ) ?? fitWidth(core, room);

  // One sentence per side, the lead finding's first, each fitted to the width by dropping
  // its later clauses whole. Priority: the lead finding's evidence, the other findings',
  // since when, the rest.
  const sentences: { finding: Finding; parts: LinePart[]; after?: boolean }[] = [];
  if (j.fullest !== null) {
    sentences.push({
      finding: 'hotspot',
      parts: [
        {
          text: `Fullest ${label(j.fullest.shard)}: ${formatCount(j.fullest.count)} req, ${formatRelative(j.fullest.relative)} fair share`,
          short: `Fullest ${label(j.fullest.shard)}: ${formatRelative(j.fullest.relative)} fair share`,
          rank: 0,
        },
        {
          text: `chance ceiling ${formatRelative(j.ceiling.relative)}${j.ceiling.requests !== null ? ` (${formatCount(j.ceiling.requests)} req)` : ''}`,
          short: `chance ceiling ${formatRelative(j.ceiling.relative)}`,
          rank: 2,
        },
        { text: `${pStatement(j.fullest.p ?? 1)}`, rank: 1 },
      ],
    });
  }
  // What made it hot, from the keys: right after the fullest shard's sentence.
  const cause = j.keys?.causes.find((entry) => entry.shard === hot?.shard) ?? j.keys?.causes[0];
  if (cause !== undefined) {
    sentences.push({
      finding: cause.excess > 0 ? 'hotspot' : lead,
      parts: causeParts(cause, wide),
    });
  }
  if (j.findings.includes('cold') && j.emptiest !== null && j.floor !== null) {
    const parts: LinePart[] = [
      {
        text: `Emptiest ${label(j.emptiest.shard)}: ${formatCount(j.emptiest.count)} req, ${formatRelative(j.emptiest.relative)} fair share`,
        short: `Emptiest ${label(j.emptiest.shard)}: ${formatRelative(j.emptiest.relative)} fair share`,
        rank: 0,
      },
      {
        text: `chance floor ${formatRelative(j.floor.relative)}${j.floor.requests !== null ? ` (${formatCount(j.floor.requests)} req)` : ''}`,
        short: `chance floor ${formatRelative(j.floor.relative)}`,
        rank: 2,
      },
      { text: `${pStatement(j.emptiest.p ?? 1)}`, rank: 1 },
    ];
    if (j.empty.observed > 0) {
      parts.push({
        text: `${j.empty.observed} empty, ${formatPlain(j.empty.expected)} expected, ${pStatement(j.empty.p ?? 1)}`,
        rank: 3,
      });
    }
    sentences.push({ finding: 'cold', parts });
  }
  if (j.findings.includes('uneven')) {
    sentences.push({
      finding: 'uneven',
      parts: [
        {
          text: `Spread phi ${formatPlain(j.spread.phi)} (1 under random placement)`,
          short: `Spread phi ${formatPlain(j.spread.phi)}`,
          rank: 0,
        },
        { text: `${pStatement(j.spread.p)}`, rank: 1 },
      ],
    });
  }
  // Since when: the streak of the lead shard, or the incident it has opened.
  const leadShard =
    j.pattern === 'failover' || lead === 'hotspot' ? hot : lead === 'cold' ? cold : undefined;
  if (leadShard !== undefined) {
    const incident = j.incidents.find(
      (open) => open.shard === leadShard.shard && open.finding === leadShard.finding,
    );
    sentences.push({
      finding: leadShard.finding,
      after: true,
      parts:
        incident !== undefined
          ? [
              {
                text: `Incident open since ${formatClock(Date.parse(incident.since))} (${incident.windows} windows)`,
                rank: 0,
              },
              { text: `adjusted p, max-statistic over ${j.shards} shards`, rank: 1 },
            ]
          : [
              {
                text: `Flagged ${leadShard.streak} window${leadShard.streak === 1 ? '' : 's'} in a row`,
                rank: 0,
              },
              { text: `${context.confirm} open an incident`, rank: 1 },
            ],
    });
  }
  if (easing) {
    sentences.push({
      finding: 'chance',
      parts: j.incidents.map((incident, index) => ({
        text: `${incident.finding} on ${label(incident.shard)} open since ${formatClock(Date.parse(incident.since))} (${incident.windows} windows)`,
        short: `${incident.finding} on ${label(incident.shard)}`,
        rank: index,
      })),
    });
  }
  if (lead === 'chance' && j.fullest !== null) {
    sentences.push({
      finding: 'chance',
      parts: [
        {
          text: 'No shard past the chance ceiling or below the floor',
          short: 'No shard past chance',
          rank: 0,
        },
        {
          text: `spread phi ${formatPlain(j.spread.phi)}, ${pStatement(j.spread.p)}`,
          short: `phi ${formatPlain(j.spread.phi)}, ${pStatement(j.spread.p)}`,
          rank: 1,
        },
      ],
    });
  }
  if (j.findings.includes('too little traffic')) {
    sentences.push({
      finding: 'too little traffic',
      parts:
        j.detectableExcess === null
          ? [
              {
                text: 'No requests in this window: nothing can be told from chance',
                short: 'No requests in this window',
                rank: 0,
              },
            ]
          : [
              {
                text: `Only ${formatCount(j.requests)} req on ${j.shards} shards: detectable excess ${formatRelative(j.detectableExcess)} (limit ${formatRelative(context.maxDetectable)})`,
                short: `Only ${formatCount(j.requests)} req: detectable excess ${formatRelative(j.detectableExcess)}`,
                rank: 0,
              },
            ],
    });
  }
  const rank = (sentence: { finding: Finding; after?: boolean }) =>
    sentence.after === true
      ? 2
      : sentence.finding === lead
        ? 0
        : j.findings.includes(sentence.finding)
          ? 1
          : 3;
  const evidence = sentences
    .map((sentence, order) => ({ ...sentence, order }))
    .sort((a, b) => rank(a) - rank(b) || a.order - b.order)
    .map((sentence) => fitParts(sentence.parts, width, '; ', 'drop first'));

  const modelParts: LinePart[] = [
    {
      text: `null ${j.null}${j.baseline === undefined ? '' : j.baseline.ready ? ' (learned)' : ` (learning ${j.baseline.learnedWindows}/${j.baseline.neededWindows})`}`,
      rank: 0,
    },
    { text: `spread ${j.spreadMode}`, rank: 2 },
  ];
  // N_eff matters when traffic is over-dispersed: the spread test rejects with phi above 1.
  if (j.spread.phi > 1 && j.spread.p <= j.alpha) {
    modelParts.push({
      text: `N_eff ${formatCount(Math.round(j.nEff))} (phi ${formatPlain(j.spread.phi)})`,
      short: `N_eff ${formatCount(Math.round(j.nEff))}`,
      rank: 1,
    });
  }
  modelParts.push({
    text: 'verdicts are statistical evidence, not certainty',
    short: 'statistical evidence only',
    rank: 0,
  });
  if (!j.coldTests) {
    modelParts.push({
      text: 'cold tests off (no declared universe)',
      short: 'cold tests off',
      rank: 1,
    });
  }
  return {
    tone: findingTones[key],
    symbol,
    headline,
    windowText,
    evidence,
    model: fitParts(modelParts, width),
  };
}

/**
 * The cause of a hot shard in clauses, from its numbers; the key is escaped and cut like a
 * shard id (keys come from the wire too). Words: "hot key", "moved", "placement", as in the
 * verdict stream.
 */
function causeParts(cause: KeyCause, wide: boolean): LinePart[] {
  const top: LinePart[] =
    cause.topKey === null
      ? []
      : [
          {
            text: `top key ${wireLabel(cause.topKey.key, wide ? 32 : 16)} ≤ ${formatShare(cause.topKeyShareAtMost)} of the excess`,
            rank: 2,
          },
        ];
  const keysRatio = formatPlain(cause.distinct / Math.max(cause.distinctExpected, 1e-300));
  switch (cause.cause) {
    case 'hot key':
      return [
        {
          text: `Cause: hot key ${wireLabel(cause.topKey?.key ?? '?', wide ? 32 : 20)} carries ≥ ${formatShare(cause.topKeyShare)} of ${label(cause.shard)}'s excess`,
          short: `Cause: hot key ${wireLabel(cause.topKey?.key ?? '?', 20)}`,
          rank: 0,
        },
        {
          text: `${formatCount(cause.topKey?.count ?? 0)} req, ≤ ${formatCount(cause.topKey?.overestimate ?? 0)} overcounted`,
          rank: 1,
        },
      ];
    case 'moved':
      return [
        {
          text: `Cause: moved from ${label(cause.from?.shard)} (${formatCount(Math.round(cause.from?.deficit ?? 0))} req short) to ${label(cause.shard)}`,
          short: `Cause: moved from ${label(cause.from?.shard)} to ${label(cause.shard)}`,
          rank: 0,
        },
        { text: `${keysRatio}x the keys expected`, rank: 1 },
        ...top,
      ];
    case 'placement':
      return [
        cause.basis === 'keys per shard'
          ? {
              text: `Cause: placement, ${label(cause.shard)} holds ${keysRatio}x the keys random placement gives`,
              short: `Cause: placement, ${keysRatio}x the keys expected`,
              rank: 0,
            }
          : {
              text: `Cause: placement, ${cause.basis === 'weights' ? 'excess spread over many keys' : 'heavy keys share the shard'}`,
              short: 'Cause: placement',
              rank: 0,
            },
        ...top,
      ];
  }
}

function formatShare(share: number): string {
  return `${Math.round(share * 100)}%`;
}

/** A shard id for a sentence: escaped and cut to 24 cells. */
function label(id: string | undefined): string {
  return id === undefined ? '?' : wireLabel(id, 24);
}

function shardTableView(
  view: WindowView | null,
  sort: ShardSort,
  layout: ScreenLayout,
  context: ScreenContext,
): ShardTableView {
  const width = layout.shardPanelWidth;
  const titleParts: LinePart[] = [
    { text: 'Shards', rank: 0 },
    { text: `sorted by ${sort} (s)`, short: `by ${sort} (s)`, rank: 1 },
    {
      text: `streak ${context.confirm} opens an incident (!)`,
      short: `${context.confirm} in a row open an incident`,
      rank: 2,
    },
  ];
  const heading = tableHeading(layout, null);
  if (view === null) {
    return {
      title: fitParts(titleParts, width),
      heading,
      rows: [],
      empty: 'No window judged yet.',
    };
  }
  const j = view.judgement;
  if (!view.sharesMatchVerdict) {
    titleParts.push({ text: 'learned shares: flagged and extreme shards only', rank: 3 });
  }
  const title = fitParts(titleParts, width);
  if (view.candidates.length === 0) {
    return { title, heading, rows: [], empty: 'No requests in this window.' };
  }
  // Each sort chooses its rows from all shards (the window view keeps the best of each).
  const ordered = [...view.candidates]
    .sort(
      sort === 'evidence'
        ? byEvidence(j)
        : sort === 'load'
          ? (a, b) => b.relative - a.relative || compareIds(a.shard, b.shard)
          : (a, b) => compareIds(a.shard, b.shard),
    )
    .slice(0, layout.shardRows);
  const scale = barScale(j, ordered);
  const rows = ordered.map((row): ShardRowView => {
    const tone: Tone =
      row.finding === 'hotspot' ? 'hotspot' : row.finding === 'cold' ? 'cold' : 'plain';
    return {
      mark: row.finding === 'hotspot' ? '▲' : row.finding === 'cold' ? '▼' : ' ',
      tone,
      shard: wireLabel(row.shard, layout.shardIdWidth),
      load: formatCount(row.count),
      fair: row.fairShare === null ? '-' : formatCount(row.fairShare),
      relative: formatRelative(row.relative),
      p: row.p === null ? '-' : `${row.pBound}${formatP(row.p)}`,
      streak: row.finding === null ? '-' : `${row.streak}${row.incident ? ' !' : ''}`,
      bar: {
        load: scale.at(row.relative),
        ceiling: scale.at(j.ceiling.relative),
        floor: j.floor === null ? null : scale.at(j.floor.relative),
      },
    };
  });
  return { title, heading: tableHeading(layout, scale), rows, empty: null };
}

/**
 * Evidence first: flagged shards by adjusted p, then every other shard by what its p column
 * says (an exact p, or the bound it is known to pass), ties by how far it is toward its
 * side's chance limit. So the p column reads from strongest to weakest evidence down the
 * table, whatever side a shard is on.
 */
function byEvidence(j: Judgement): (a: ShardCandidate, b: ShardCandidate) => number {
  const towardLimit = (row: ShardCandidate) =>
    row.relative >= 1
      ? (row.relative - 1) / Math.max(1e-9, j.ceiling.relative - 1)
      : (1 - row.relative) / Math.max(1e-9, 1 - (j.floor?.relative ?? 2 - j.ceiling.relative));
  return (a, b) => {
    const flaggedFirst = (a.finding === null ? 1 : 0) - (b.finding === null ? 1 : 0);
    if (flaggedFirst !== 0) return flaggedFirst;
    const byP = (a.p ?? 2) - (b.p ?? 2);
    if (byP !== 0) return byP;
    // At an equal p an exact value is the one that bounds the others.
    const exactFirst = (a.pBound === '' ? 0 : 1) - (b.pBound === '' ? 0 : 1);
    if (exactFirst !== 0) return exactFirst;
    return towardLimit(b) - towardLimit(a) || compareIds(a.shard, b.shard);
  };
}

/** Where a relative load falls along the load bars, as a fraction of a bar. */
interface BarScale {
  readonly low: number;
  readonly high: number;
  readonly ceiling: number;
  /** Null when the cold tests are off. */
  readonly floor: number | null;
  at(relative: number): number;
}

/**
 * The load bars' scale: from a little below the lowest of the floor and the rows on show to a
 * little past the highest of the ceiling and the rows, not from zero, so shards within
 * chance differ visibly and the floor and ceiling marks stand apart. The band up to the
 * ceiling keeps at least half the bar however far a hotspot runs past it; beyond the
 * ceiling the scale is linear again to the highest load.
 */
function barScale(j: Judgement, rows: readonly ShardCandidate[]): BarScale {
  const ceiling = j.ceiling.relative;
  const floor = j.floor?.relative ?? Math.max(0, 2 - ceiling);
  const loads = rows.map((row) => row.relative).filter((value) => Number.isFinite(value));
  const lowest = Math.min(floor, 1, ...loads);
  const highest = Math.max(ceiling, ...loads);
  const low = Math.max(0, lowest - 0.1 * (ceiling - lowest));
  const high = highest + 0.05 * (highest - low);
  const band = Math.max(0.5, (ceiling - low) / (high - low));
  return {
    low,
    high,
    ceiling,
    floor: j.floor?.relative ?? null,
    at(relative) {
      const value = Math.max(low, Math.min(high, relative));
      return value <= ceiling
        ? ((value - low) / Math.max(1e-12, ceiling - low)) * band
        : band + ((value - ceiling) / Math.max(1e-12, high - ceiling)) * (1 - band);
    },
  };
}

/** The table's heading; over the bars, the scale's left end, 1x and the ceiling mark. */
function tableHeading(layout: ScreenLayout, scale: BarScale | null): string {
  const { load, fair, relative, p, streak } = shardColumns;
  const numbers =
    ' ' +
    padWidth('shard', layout.shardIdWidth + 1) +
    padWidth('load', load, 'right') +
    padWidth('fair', fair, 'right') +
    padWidth('rel', relative, 'right') +
    padWidth('adj p', p, 'right') +
    ' ' +
    padWidth('streak', streak) +
    ' ';
  const cells = layout.barWidth;
  if (scale === null)
    return (
      numbers + fitParts([{ text: 'load vs chance ┃ceiling', short: '┃ceiling', rank: 0 }], cells)
    );
  const at = (relative: number) => Math.round(scale.at(relative) * (cells - 1));
  return (
    numbers +
    labelRow(cells, [
      {
        at: at(scale.ceiling),
        text: `┃${formatRelative(scale.ceiling)}`,
        mirrored: `${formatRelative(scale.ceiling)}┃`,
      },
      { at: 0, text: formatRelative(scale.low) },
      { at: at(1), text: '1x' },
      ...(scale.floor === null
        ? []
        : [
            {
              at: at(scale.floor),
              text: `╎${formatRelative(scale.floor)}`,
              mirrored: `${formatRelative(scale.floor)}╎`,
            },
          ]),
    ])
  ).trimEnd();
}

/**
 * A row of labels, each starting at its cell or, when only that fits, ending at it; a label
 * that would overlap one placed before it is left out whole. O(width x labels).
 */
function labelRow(
  width: number,
  labels: readonly { at: number; text: string; mirrored?: string }[],
): string {
  const cells = Array.from({ length: width }, () => ' ');
  const free = (start: number, text: string) => {
    if (start < 0 || start + text.length > width) return false;
    for (let i = 0; i < text.length; i++) if (cells[start + i] !== ' ') return false;
    // One blank cell between labels, so two never read as one.
    return (
      (start === 0 || cells[start - 1] === ' ') &&
      (start + text.length >= width || cells[start + text.length] === ' ')
    );
  };
  const put = (start: number, text: string) => {
    for (let i = 0; i < text.length; i++) cells[start + i] = text[i];
  };
  for (const label of labels) {
    const mirrored = label.mirrored ?? label.text;
    const ending = label.at - mirrored.length + 1;
    const starting = Math.max(0, Math.min(width - label.text.length, label.at));
    if (free(starting, label.text)) put(starting, label.text);
    else if (free(ending, mirrored)) put(ending, mirrored);
  }
  return cells.join('');
}

function spreadView(view: WindowView | null, layout: ScreenLayout): SpreadView {
  const title = 'Spread';
  const room = layout.spreadPanelWidth - displayWidth(`${title} · `);
  const legendParts: LinePart[] = [
    { text: '█ shards seen', short: '█ seen', rank: 0 },
    { text: '⣿ random placement predicts', short: '⣿ predicted', rank: 0 },
  ];
  if (view === null || view.histogram === null) {
    return {
      title,
      legend: fitParts(legendParts, room, '  '),
      bins: [],
      axis: '',
      empty: view === null ? 'No window judged yet.' : 'No requests: nothing to draw.',
    };
  }
  const fine = view.histogram;
  const inner =
    coarseBinChoices.find((bins) => (bins + 2) * cellsPerBin <= layout.spreadPanelWidth) ?? 6;
  const group = fineBins / inner;
  const observed: number[] = [fine.observed[0]];
  const expected: number[] = [fine.expected[0]];
  for (let bin = 0; bin < inner; bin++) {
    let seen = 0;
    let predicted = 0;
    for (let k = 1 + bin * group; k <= (bin + 1) * group; k++) {
      seen += fine.observed[k];
      predicted += fine.expected[k];
    }
    observed.push(seen);
    expected.push(predicted);
  }
  observed.push(fine.observed[fine.bins + 1]);
  expected.push(fine.expected[fine.bins + 1]);
  const tallest = Math.max(1, ...observed, ...expected);
  const j = view.judgement;
  const width = (fine.high - fine.low) / inner;
  const edgeOf = (bin: number) => fine.low + (bin - 1) * width;
  const bins = observed.map((seen, bin): SpreadBin => {
    const start = bin === 0 ? -Infinity : edgeOf(bin);
    const end = bin === inner + 1 ? Infinity : edgeOf(bin + 1);
    const tone: Tone =
      seen === 0
        ? 'plain'
        : start >= j.ceiling.relative
          ? 'hotspot'
          : j.floor !== null && end <= j.floor.relative
            ? 'cold'
            : 'plain';
    return { observed: seen / tallest, expected: expected[bin] / tallest, tone };
  });
  const axis = composeAxis(inner, fine.low, fine.high, j.ceiling.relative, layout.spreadPanelWidth);
  const legend = fitParts(legendParts, room, '  ');
  const notes: LinePart[] = [
    {
      text: `tallest ${formatPlain(tallest)} shards`,
      short: `top ${formatPlain(tallest)}`,
      rank: 3,
    },
  ];
  if (fine.predictedRequests < j.requests) {
    notes.push({
      text: `predicted on ${formatCount(fine.predictedRequests)} judged req`,
      short: `on ${formatCount(fine.predictedRequests)} judged req`,
      rank: 1,
    });
  }
  if (fine.groupedShares) notes.push({ text: 'shares grouped', rank: 2 });
  if (!view.sharesMatchVerdict) notes.push({ text: 'declared shares', rank: 1 });
  const withNotes = fitParts([{ text: legend, rank: 0 }, ...notes], room);
  return { title, legend: withNotes, bins, axis, empty: null };
}

/** The axis under the chart: the edge bins' bounds, 1x and the ceiling, where they fall. */
function composeAxis(
  inner: number,
  low: number,
  high: number,
  ceiling: number,
  width: number,
): string {
  const cells = Array.from({ length: Math.min(width, (inner + 2) * cellsPerBin) }, () => ' ');
  const fits = (start: number, text: string) => {
    if (start < 0 || start + displayWidth(text) > cells.length) return false;
    for (let i = 0; i < text.length; i++) if (cells[start + i] !== ' ') return false;
    return true;
  };
  const put = (start: number, text: string) => {
    for (let i = 0; i < text.length; i++) cells[start + i] = text[i];
  };
  // A label starts at its mark, or ends at it when that is the only way it fits.
  const place = (at: number, text: string, mirrored = text) => {
    const start = Math.max(0, Math.min(cells.length - displayWidth(text), at));
    if (fits(start, text)) put(start, text);
    else if (fits(at - displayWidth(mirrored) + 1, mirrored))
      put(at - displayWidth(mirrored) + 1, mirrored);
  };
  const cellOf = (relative: number) =>
    cellsPerBin * (1 + Math.min(inner, Math.max(0, ((relative - low) / (high - low)) * inner)));
  place(0, `<${formatRelative(low)}`);
  place(cells.length - 7, `>${formatRelative(high)}`);
  const ceilingAt = Math.round(cellOf(ceiling)) - 1;
  place(ceilingAt, `┃${formatRelative(ceiling)} ceiling`, `ceiling ${formatRelative(ceiling)}┃`);
  place(Math.round(cellOf(1)) - 1, '|1x', '1x|');
  return cells.join('');
}

/** The state a window is shown in: its pattern or lead finding, or easing (see WindowState). */
function windowStateOf(j: Judgement): WindowState {
  if (j.pattern !== null) return j.pattern;
  const lead = j.findings[0];
  return lead === 'chance' && j.incidents.length > 0 ? 'easing' : lead;
}

function historyView(
  windows: readonly WindowView[],
  shownIndex: number | null,
  layout: ScreenLayout,
): HistoryView {
  // The newest windows, unless the one on show is older: then the strip starts at it.
  let first = Math.max(0, windows.length - layout.historySlots);
  if (shownIndex !== null && shownIndex < first) first = shownIndex;
  const shown = windows.slice(first, first + layout.historySlots);
  const slots = shown.map((view, offset): HistorySlot => {
    const j = view.judgement;
    const key = windowStateOf(j);
    let level = 0;
    if (j.fullest !== null && j.ceiling.relative > 1) {
      level = Math.max(0, Math.min(1, (j.fullest.relative - 1) / (j.ceiling.relative - 1) / 2));
    }
    return {
      level,
      symbol: findingSymbols[key],
      tone: findingTones[key],
      selected: first + offset === shownIndex,
    };
  });
  const count = `${shown.length} window${shown.length === 1 ? '' : 's'}`;
  const spanPart: LinePart =
    shown.length === 0
      ? { text: 'no windows yet', rank: 0 }
      : {
          text: `${count}, ${formatClock(shown[0].startMs)}–${formatClock(shown[shown.length - 1].endMs)} UTC`,
          short: `${count} to ${formatClock(shown[shown.length - 1].endMs)}`,
          rank: 0,
        };
  const room = layout.columns - displayWidth('History · ');
  const legend = (short: boolean) =>
    legendItems.map((item) => (short ? item.short : item.text)).join(short ? ' ' : '  ');
  // The legend whole, in short words, or not at all (the help has it): never half of it.
  const span =
    [
      `${spanPart.text} · ${legend(false)}`,
      `${spanPart.short ?? spanPart.text} · ${legend(false)}`,
      `${spanPart.short ?? spanPart.text} · ${legend(true)}`,
      legend(false),
      legend(true),
      `${spanPart.short ?? spanPart.text}`,
    ].find((text) => displayWidth(text) <= room) ?? fitWidth(spanPart.text, room);
  return { slots, span };
}

function incidentView(view: WindowView | null, layout: ScreenLayout): IncidentView {
  const room = layout.columns - displayWidth('Incidents ');
  if (view === null) return { items: [], none: 'none open', falseRate: '', more: '' };
  const j = view.judgement;
  const falseRate: LinePart = {
    text: `by chance about ${formatP(j.falseIncidentsPerDay)} false incidents a day (approx.)`,
    short: `chance: ${formatP(j.falseIncidentsPerDay)} false a day`,
    rank: 1,
  };
  const itemOf = (incident: Judgement['incidents'][number], short: boolean): IncidentItem => ({
    symbol: findingSymbols[incident.finding],
    tone: findingTones[incident.finding],
    text: short
      ? `${wireLabel(incident.shard, 20)} since ${formatClock(Date.parse(incident.since))}`
      : `${incident.finding} ${wireLabel(incident.shard, 20)} since ${formatClock(Date.parse(incident.since))} (${incident.windows} windows)`,
  });
  // As many incidents as fit whole, then how many more; the false rate only if room is left.
  const widthOf = (items: readonly IncidentItem[], more: string, rate: string) =>
    displayWidth(
      [items.map((item) => `${item.symbol} ${item.text}`).join(' · '), more, rate]
        .filter((text) => text !== '')
        .join(' · '),
    );
  if (j.incidents.length === 0) {
    const none = 'none open';
    const rate = [falseRate.text, falseRate.short as string].find(
      (text) => displayWidth(`${none} · ${text}`) <= room,
    );
    return { items: [], none, falseRate: rate ?? '', more: '' };
  }
  for (const short of [false, true]) {
    for (let shownCount = j.incidents.length; shownCount >= 1; shownCount--) {
      const items = j.incidents.slice(0, shownCount).map((incident) => itemOf(incident, short));
      const more =
        shownCount < j.incidents.length ? `+${j.incidents.length - shownCount} more` : '';
      if (widthOf(items, more, '') > room) continue;
      const rate =
        [falseRate.text, falseRate.short as string].find(
          (text) => widthOf(items, more, text) <= room,
        ) ?? '';
      return { items, none: null, falseRate: rate, more };
    }
  }
  return { items: [], none: null, falseRate: '', more: `${j.incidents.length} open` };
}

const sourceSymbols: Record<SourceState, { symbol: string; tone: Tone }> = {
  connecting: { symbol: '◌', tone: 'uneven' },
  connected: { symbol: '●', tone: 'chance' },
  reading: { symbol: '●', tone: 'chance' },
  quiet: { symbol: '◐', tone: 'uneven' },
  disconnected: { symbol: '✕', tone: 'hotspot' },
  ended: { symbol: '■', tone: 'muted' },
};

function sourceView(source: SourceReading, layout: ScreenLayout): SourceView {
  const symbol = sourceSymbols[source.state];
  const room = layout.columns - displayWidth(`Source ${symbol.symbol} ${source.state} · `);
  const requests = source.requestsPerSecond;
  const records = source.recordsPerSecond;
  const parts: LinePart[] = [
    requests === null
      ? { text: 'requests -/s', short: 'req -/s', rank: 0 }
      : {
          text: `requests ${formatRate(requests)}`,
          short: `req ${formatRate(requests)}`,
          rank: 0,
        },
  ];
  // Records per second only where they differ from requests: count reports carry many each.
  if (records !== null && requests !== null && formatRate(records) !== formatRate(requests)) {
    parts.push({ text: `records ${formatRate(records)}`, rank: 4 });
  }
  parts.push(
    {
      text: source.lagMs === null ? 'lag -' : `lag ${formatDuration(Math.max(0, source.lagMs))}`,
      rank: 1,
    },
    source.lastRecordAgeMs === null
      ? { text: 'no record yet', rank: 2 }
      : {
          text: `last record ${formatDuration(Math.max(0, source.lastRecordAgeMs))} ago`,
          short: `last ${formatDuration(Math.max(0, source.lastRecordAgeMs))} ago`,
          rank: 2,
        },
    { text: `rejected ${formatCount(source.rejected)}`, rank: 3 },
    { text: `late ${formatCount(source.late)}`, rank: 3 },
  );
  return { ...symbol, state: source.state, facts: fitParts(parts, room) };
}

function helpView(context: ScreenContext): HelpView {
  return {
    title: 'Help · ? or Esc closes it',
    keys: [
      { key: 'p  space', action: 'pause / resume (paused, windows are still judged and kept)' },
      { key: '←  →  [  ]', action: 'step back / forward through the kept windows (pauses)' },
      { key: 's', action: 'sort by evidence, load or shard id (rows chosen from all shards)' },
      { key: '?  h', action: 'this help' },
      { key: 'q  Ctrl+C', action: 'quit and restore the terminal' },
    ],
    panels: [
      {
        name: 'Verdict',
        text: `the finding for the window on show and its evidence: the fullest shard, its load, the chance ceiling (1 - alpha quantile under random placement), the p-value; with keys, the cause. ↘ EASING: within chance, an incident still open (it clears after ${context.clear} clean windows).`,
      },
      {
        name: 'Shards',
        text: `▲ hotspot ▼ cold; fair = N p; rel = load / fair; adj p: max-statistic, exact for flagged and extreme shards, ≥ x at least the extreme's, > alpha within chance; streak (${context.confirm} open an incident, ! open). Bars start at the heading's left end: ▒ within chance, █ past the ceiling ┃, ╎ floor.`,
      },
      {
        name: 'Spread',
        text: '█ shards seen per band of relative load, ⣿ what random placement predicts.',
      },
      {
        name: 'History',
        text: `fullest vs ceiling per window (upper row = past it); ${findingLegend}.`,
      },
      {
        name: 'Source',
        text: '● reading ◌ connecting ◐ quiet ✕ disconnected ■ ended; requests/s (records/s too when they differ); lag = how far the newest record trails the clock.',
      },
    ],
  };
}
