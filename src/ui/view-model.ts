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
  formatRate,
  formatRelative,
  formatWindowLength,
} from './display-numbers.js';
import { displayWidth, terminalSafe, wireLabel } from './terminal-text.js';

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
  'hotspot' | 'cold' | 'failover' | 'uneven' | 'chance' | 'thin' | 'muted' | 'plain';

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
  /** `--max-detectable`: the detectable excess above which a window has too little traffic. */
  readonly maxDetectable: number;
}

/** The state of the source, in one word the screen shows beside its symbol. */
export type SourceState =
  'connecting' | 'connected' | 'reading' | 'quiet' | 'disconnected' | 'ended';

/** The source as last measured (see SourceMeter). */
export interface SourceReading {
  readonly state: SourceState;
  /** Records per second over the last few seconds; null before two readings. */
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
  /** Adjusted p: exact for flagged, fullest and emptiest shards, else a lower bound. */
  readonly p: number | null;
  readonly pIsBound: boolean;
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
  /** Flagged, fullest, emptiest and the highest and lowest loads, unordered. */
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
  /** The approximate false-incident rate under random placement. */
  readonly falseRate: string;
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

const findingSymbols: Record<Finding | 'failover', string> = {
  hotspot: '▲',
  cold: '▼',
  failover: '◆',
  uneven: '~',
  chance: '·',
  'too little traffic': '?',
};

const findingTones: Record<Finding | 'failover', Tone> = {
  hotspot: 'hotspot',
  cold: 'cold',
  failover: 'failover',
  uneven: 'uneven',
  chance: 'chance',
  'too little traffic': 'thin',
};

/** The legend of finding symbols, as the help and the README give it. */
const findingLegend = '▲ hotspot  ▼ cold  ◆ failover  ~ uneven  · chance  ? too little traffic';
/** The same for 80 columns (the help has the full words). */
const compactFindingLegend = '▲hotspot ▼cold ◆failover ~uneven ·chance ?too little';

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
      pIsBound: false,
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
      pIsBound: false,
      finding: null,
      streak: 0,
      incident: false,
    });
  }
  if (sharesMatchVerdict) {
    // The highest and the lowest relative loads, by one pass keeping two short sorted lists.
    const high: { shard: number; relative: number }[] = [];
    const low: { shard: number; relative: number }[] = [];
    for (let shard = 0; shard < m; shard++) {
      const relative = counts[shard] / fairOf(shard);
      keepBest(high, { shard, relative }, candidateRows, (a, b) => b.relative - a.relative);
      keepBest(low, { shard, relative }, candidateRows / 4, (a, b) => a.relative - b.relative);
    }
    for (const { shard, relative } of [...high, ...low]) {
      const id = idAt(shard);
      indexOf.set(id, shard);
      if (byId.has(id)) continue;
      // Any other shard's adjusted p is at least the fullest's (its load is lower) on the
      // hot side, and at least the emptiest's on the cold side: a bound, shown with >=.
      const hotSide = relative >= 1;
      const extremeP = hotSide ? fullestP : judgement.coldTests ? emptiestP : null;
      // A bound at the engine's reporting floor says nothing.
      const bound = extremeP !== null && extremeP > 1e-300 ? extremeP : null;
      byId.set(id, {
        shard: id,
        count: counts[shard],
        fairShare: null,
        relative,
        p: bound,
        pIsBound: bound !== null,
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

function keepBest<T>(list: T[], item: T, size: number, order: (a: T, b: T) => number): void {
  if (list.length === size && order(item, list[list.length - 1]) >= 0) return;
  let at = list.length;
  while (at > 0 && order(item, list[at - 1]) < 0) at--;
  list.splice(at, 0, item);
  if (list.length > size) list.pop();
}

/**
 * Where the panels go. Stacked below 120 columns, shards beside the spread from there;
 * one line is left free so the frame never scrolls the terminal. At 80x24 the table keeps
 * 4 rows and the chart 3; more lines go to both, more columns to the history and the bars.
 */
export function screenLayout(size: TerminalSize): ScreenLayout {
  const columns = Math.max(40, size.columns);
  const lines = Math.max(12, size.rows - 1);
  const sideBySide = columns >= 120;
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
  // mark, id, load, fair, relative, p, streak, with single spaces between
  const fixedColumns = 1 + shardIdWidth + 1 + 7 + 1 + 7 + 1 + 6 + 1 + 9 + 1 + 7;
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
    barWidth: Math.max(8, shardPanelWidth - fixedColumns),
  };
}

/** The keys, as the bottom line and the help show them. */
const keyHints: readonly KeyHint[] = [
  { key: 'p', action: 'pause/resume' },
  { key: '←/→', action: 'step' },
  { key: 's', action: 'sort' },
  { key: '?', action: 'help' },
  { key: 'q', action: 'quit' },
];

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
    header: headerView(state, shownIndex),
    verdict:
      shown === null ? waitingVerdict(state.context) : verdictView(shown, state.context, layout),
    shards: shardTableView(shown, state.sort, layout, state.context),
    spread: spreadView(shown, layout),
    history: historyView(state.windows, shownIndex, layout),
    incidents: incidentView(shown),
    source: sourceView(state.source),
    keys: keyHints,
    help: state.help ? helpView(state.context) : null,
  };
}

function headerView(state: ScreenState, shownIndex: number | null): HeaderView {
  const latest = state.windows.at(-1)?.judgement;
  const facts = [
    terminalSafe(state.context.sourceLabel),
    latest === undefined ? null : `${latest.shards} shards`,
    `${formatWindowLength(state.context.windowMs)} windows`,
    latest === undefined ? null : `alpha ${latest.alpha}`,
  ]
    .filter((part) => part !== null)
    .join(' · ');
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
  return { title: 'shardwise', facts, ...mode, position };
}

function waitingVerdict(context: ScreenContext): VerdictView {
  return {
    tone: 'muted',
    symbol: '…',
    headline: 'WAITING for the first window to close',
    windowText: '',
    evidence: [
      `A window closes ${formatWindowLength(context.windowMs)} after it starts plus ${formatWindowLength(context.latenessMs)} of lateness; its verdict appears here.`,
    ],
    model: 'Verdicts are statistical evidence, not certainty.',
  };
}

function verdictView(view: WindowView, context: ScreenContext, layout: ScreenLayout): VerdictView {
  const j = view.judgement;
  const wide = layout.sideBySide;
  const span = `${formatClock(view.startMs)}–${formatClock(view.endMs)}`;
  const windowText = wide ? `window ${span} UTC` : span;
  const hot = j.flagged.find((shard) => shard.finding === 'hotspot');
  const cold = j.flagged.find((shard) => shard.finding === 'cold');
  const lead = j.findings[0];
  const key: Finding | 'failover' = j.pattern ?? lead;
  let headline: string;
  if (j.pattern === 'failover') {
    headline = `FAILOVER: ${label(cold?.shard ?? j.emptiest?.shard)} went cold, ${label(hot?.shard ?? j.fullest?.shard)} took its traffic`;
  } else if (lead === 'hotspot') {
    headline = `HOTSPOT on ${label(hot?.shard ?? j.fullest?.shard)}: hotter than random placement allows`;
  } else if (lead === 'cold') {
    headline = `COLD: ${label(cold?.shard ?? j.emptiest?.shard)} gets less than chance allows`;
  } else if (lead === 'uneven') {
    headline = 'UNEVEN: wider spread than chance, no shard stands out';
  } else if (lead === 'chance') {
    headline = 'CHANCE: the skew is what random placement gives';
  } else {
    headline = 'TOO LITTLE TRAFFIC: a hotspot could not be told from chance';
  }
  const named: readonly Finding[] = j.pattern === 'failover' ? ['hotspot', 'cold'] : [lead];
  const also = j.findings.filter((finding) => !named.includes(finding));
  if (also.length > 0) headline += ` (also ${also.join(', ')})`;

  // One sentence per side, the lead finding's first: at 80 columns each fits one line.
  // Priority: the lead finding's evidence, the other findings', since when, the rest.
  const sentences: { finding: Finding; text: string; after?: boolean }[] = [];
  if (j.fullest !== null) {
    const inRequests =
      wide && j.ceiling.requests !== null ? ` (${formatCount(j.ceiling.requests)} req)` : '';
    sentences.push({
      finding: 'hotspot',
      text: `Fullest ${label(j.fullest.shard)}: ${formatCount(j.fullest.count)} req, ${formatRelative(j.fullest.relative)} fair share; chance ceiling ${formatRelative(j.ceiling.relative)}${inRequests}; p = ${formatP(j.fullest.p ?? 1)}`,
    });
  }
  // What made it hot, from the keys: right after the fullest shard's sentence.
  const cause = j.keys?.causes.find((entry) => entry.shard === hot?.shard) ?? j.keys?.causes[0];
  if (cause !== undefined) {
    sentences.push({
      finding: cause.excess > 0 ? 'hotspot' : lead,
      text: causeSentence(cause, wide),
    });
  }
  if (j.findings.includes('cold') && j.emptiest !== null && j.floor !== null) {
    const inRequests =
      wide && j.floor.requests !== null ? ` (${formatCount(j.floor.requests)} req)` : '';
    const empties =
      wide && j.empty.observed > 0
        ? `; ${j.empty.observed} empty, ${formatPlain(j.empty.expected)} expected, p = ${formatP(j.empty.p ?? 1)}`
        : '';
    sentences.push({
      finding: 'cold',
      text: `Emptiest ${label(j.emptiest.shard)}: ${formatCount(j.emptiest.count)} req, ${formatRelative(j.emptiest.relative)} fair share; chance floor ${formatRelative(j.floor.relative)}${inRequests}; p = ${formatP(j.emptiest.p ?? 1)}${empties}`,
    });
  }
  if (j.findings.includes('uneven')) {
    sentences.push({
      finding: 'uneven',
      text: `Spread phi ${formatPlain(j.spread.phi)} (1 under random placement), p = ${formatP(j.spread.p)}`,
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
      text:
        incident !== undefined
          ? `Incident open since ${formatClock(Date.parse(incident.since))} (${incident.windows} windows); adjusted p, max-statistic over ${j.shards} shards`
          : `Flagged ${leadShard.streak} window${leadShard.streak === 1 ? '' : 's'} in a row; ${context.confirm} open an incident`,
    });
  }
  if (lead === 'chance' && j.fullest !== null) {
    sentences.push({
      finding: 'chance',
      text: `No shard past the chance ceiling or below the floor; spread phi ${formatPlain(j.spread.phi)}, p = ${formatP(j.spread.p)}`,
    });
  }
  if (j.findings.includes('too little traffic')) {
    sentences.push({
      finding: 'too little traffic',
      text:
        j.detectableExcess === null
          ? 'No requests in this window: nothing can be told from chance'
          : `Only ${formatCount(j.requests)} req on ${j.shards} shards: detectable excess ${formatRelative(j.detectableExcess)} (limit ${formatRelative(context.maxDetectable)})`,
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
    .map((sentence) => sentence.text);

  const modelParts = [
    `null ${j.null}${j.baseline === undefined ? '' : j.baseline.ready ? ' (learned)' : ` (learning ${j.baseline.learnedWindows}/${j.baseline.neededWindows})`}`,
    `spread ${j.spreadMode}`,
  ];
  // N_eff matters when traffic is over-dispersed: the spread test rejects with phi above 1.
  if (j.spread.phi > 1 && j.spread.p <= j.alpha) {
    modelParts.push(`N_eff ${formatCount(Math.round(j.nEff))} (phi ${formatPlain(j.spread.phi)})`);
  }
  modelParts.push(
    wide ? 'verdicts are statistical evidence, not certainty' : 'statistical evidence only',
  );
  if (!j.coldTests) modelParts.push('cold tests off (no declared universe)');
  return {
    tone: findingTones[key],
    symbol: findingSymbols[key],
    headline,
    windowText,
    evidence,
    model: modelParts.join(' · '),
  };
}

/**
 * The cause of a hot shard in one sentence, from its numbers; the key is escaped and cut
 * like a shard id (keys come from the wire too). Words: "hot key", "moved", "placement",
 * as in the verdict stream.
 */
function causeSentence(cause: KeyCause, wide: boolean): string {
  const top =
    cause.topKey === null
      ? ''
      : `top key ${wireLabel(cause.topKey.key, wide ? 32 : 16)} ≤ ${formatShare(cause.topKeyShareAtMost)} of the excess`;
  switch (cause.cause) {
    case 'hot key':
      return `Cause: hot key ${wireLabel(cause.topKey?.key ?? '?', wide ? 32 : 20)} carries ≥ ${formatShare(cause.topKeyShare)} of ${label(cause.shard)}'s excess (${formatCount(cause.topKey?.count ?? 0)} req, ≤ ${formatCount(cause.topKey?.overestimate ?? 0)} overcounted)`;
    case 'moved':
      return `Cause: moved from ${label(cause.from?.shard)} (${formatCount(Math.round(cause.from?.deficit ?? 0))} req short) to ${label(cause.shard)}, ${formatPlain(cause.distinct / Math.max(cause.distinctExpected, 1e-300))}x the keys expected; ${top}`;
    case 'placement':
      return cause.basis === 'keys per shard'
        ? `Cause: placement, ${label(cause.shard)} holds ${formatPlain(cause.distinct / Math.max(cause.distinctExpected, 1e-300))}x the keys random placement gives${top === '' ? '' : `; ${top}`}`
        : `Cause: placement, ${cause.basis === 'weights' ? 'excess spread over many keys' : 'heavy keys share the shard'}${top === '' ? '' : `; ${top}`}`;
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
  const title = `Shards · sorted by ${sort} (s) · streak ${context.confirm} opens an incident (!)`;
  if (view === null) return { title, rows: [], empty: 'No window judged yet.' };
  const j = view.judgement;
  if (view.candidates.length === 0) {
    return { title, rows: [], empty: 'No requests in this window.' };
  }
  // The rows that matter most are chosen by evidence whatever the sort, which only orders them.
  const chosen = [...view.candidates].sort(byEvidence).slice(0, layout.shardRows);
  const ordered =
    sort === 'evidence'
      ? chosen
      : sort === 'load'
        ? chosen.sort((a, b) => b.relative - a.relative || a.shard.localeCompare(b.shard))
        : chosen.sort((a, b) => a.shard.localeCompare(b.shard, 'en', { numeric: true }));
  const ceiling = j.ceiling.relative;
  const floor = j.floor?.relative ?? null;
  const scale = Math.max(ceiling, ...ordered.map((row) => row.relative)) * 1.08;
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
      p: row.p === null ? '-' : `${row.pIsBound ? '≥' : ''}${formatP(row.p)}`,
      streak: row.finding === null ? '-' : `${row.streak}${row.incident ? ' !' : ''}`,
      bar: {
        load: Math.min(1, row.relative / scale),
        ceiling: ceiling / scale,
        floor: floor === null ? null : floor / scale,
      },
    };
  });
  const note = view.sharesMatchVerdict ? '' : ' · learned shares: flagged and extreme shards only';
  return { title: title + note, rows, empty: null };
}

/** Flagged shards by adjusted p, then the fullest and emptiest, then the farthest from 1x. */
function byEvidence(a: ShardCandidate, b: ShardCandidate): number {
  const rank = (row: ShardCandidate) =>
    row.finding !== null ? 0 : row.p !== null && !row.pIsBound ? 1 : 2;
  if (rank(a) !== rank(b)) return rank(a) - rank(b);
  if (rank(a) < 2 && a.p !== b.p) return (a.p ?? 1) - (b.p ?? 1);
  const distance = Math.abs(b.relative - 1) - Math.abs(a.relative - 1);
  return distance !== 0 ? distance : a.shard.localeCompare(b.shard);
}

function spreadView(view: WindowView | null, layout: ScreenLayout): SpreadView {
  const legend = '█ shards seen  ⣿ random placement predicts';
  const title = 'Spread';
  if (view === null || view.histogram === null) {
    return {
      title,
      legend,
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
  const notes = [
    `tallest ${formatPlain(tallest)} shards`,
    fine.predictedRequests < j.requests
      ? `predicted on ${formatCount(fine.predictedRequests)} judged req`
      : null,
    fine.groupedShares ? 'shares grouped' : null,
    view.sharesMatchVerdict ? null : 'declared shares',
  ].filter((part) => part !== null);
  return { title, legend: `${legend} · ${notes.join(' · ')}`, bins, axis, empty: null };
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
    const key: Finding | 'failover' = j.pattern ?? j.findings[0];
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
  const legend = layout.sideBySide ? findingLegend : compactFindingLegend;
  const span =
    shown.length === 0
      ? `no windows yet · ${legend}`
      : layout.sideBySide
        ? `${shown.length} window${shown.length === 1 ? '' : 's'}, ${formatClock(shown[0].startMs)}–${formatClock(shown[shown.length - 1].endMs)} UTC · ${legend}`
        : `${shown.length} window${shown.length === 1 ? '' : 's'} to ${formatClock(shown[shown.length - 1].endMs)} · ${legend}`;
  return { slots, span };
}

function incidentView(view: WindowView | null): IncidentView {
  if (view === null) return { items: [], none: 'none open', falseRate: '' };
  const j = view.judgement;
  const items = j.incidents.map((incident): IncidentItem => ({
    symbol: findingSymbols[incident.finding],
    tone: findingTones[incident.finding],
    text: `${incident.finding} ${wireLabel(incident.shard, 20)} since ${formatClock(Date.parse(incident.since))} (${incident.windows} windows)`,
  }));
  return {
    items,
    none: items.length === 0 ? 'none open' : null,
    falseRate: `by chance about ${formatP(j.falseIncidentsPerDay)} false incidents a day (approx.)`,
  };
}

const sourceSymbols: Record<SourceState, { symbol: string; tone: Tone }> = {
  connecting: { symbol: '◌', tone: 'uneven' },
  connected: { symbol: '●', tone: 'chance' },
  reading: { symbol: '●', tone: 'chance' },
  quiet: { symbol: '◐', tone: 'uneven' },
  disconnected: { symbol: '✕', tone: 'hotspot' },
  ended: { symbol: '■', tone: 'muted' },
};

function sourceView(source: SourceReading): SourceView {
  const facts = [
    source.recordsPerSecond === null
      ? 'records -/s'
      : `records ${formatRate(source.recordsPerSecond)}`,
    source.lagMs === null ? 'lag -' : `lag ${formatDuration(Math.max(0, source.lagMs))}`,
    source.lastRecordAgeMs === null
      ? 'no record yet'
      : `last record ${formatDuration(Math.max(0, source.lastRecordAgeMs))} ago`,
    `rejected ${formatCount(source.rejected)}`,
    `late ${formatCount(source.late)}`,
  ].join(' · ');
  return { ...sourceSymbols[source.state], state: source.state, facts };
}

function helpView(context: ScreenContext): HelpView {
  return {
    title: 'Help · ? or Esc closes it',
    keys: [
      { key: 'p  space', action: 'pause / resume (paused, windows are still judged and kept)' },
      { key: '←  →  [  ]', action: 'step back / forward through the kept windows (pauses)' },
      { key: 's', action: 'sort the shard rows by evidence, load or shard id' },
      { key: '?  h', action: 'this help' },
      { key: 'q  Ctrl+C', action: 'quit and restore the terminal' },
    ],
    panels: [
      {
        name: 'Verdict',
        text: 'the finding for the window on show; its evidence: the fullest shard, its load, the chance ceiling (1 - alpha quantile under random placement) and the p-value; with keyed records its cause: hot key, moved or placement.',
      },
      {
        name: 'Shards',
        text: `▲ hotspot ▼ cold; fair = N p; rel = load / fair; adj p = max-statistic (≥ a bound); streak (${context.confirm} opens an incident, ! open). ▒ within chance, █ past the ceiling ┃, ╎ floor.`,
      },
      {
        name: 'Spread',
        text: '█ shards seen per band of relative load, ⣿ what random placement predicts for this window; the edge bands hold all beyond.',
      },
      {
        name: 'History',
        text: `fullest vs ceiling per window (upper row = past it); findings ${findingLegend}.`,
      },
      {
        name: 'Source',
        text: '● connected or reading, ◌ connecting, ◐ quiet, ✕ disconnected, ■ ended; lag = how far the newest record trails the clock.',
      },
    ],
  };
}
