import { type HeaderView, headerView } from './header-view.js';
import { type HistoryView, historyView } from './history-view.js';
import { type IncidentView, incidentView } from './incident-view.js';
import { type KeyHint, type HelpView, keyHints, helpView } from './key-help-view.js';
import { screenLayout } from './screen-layout.js';
import { type ShardTableView, shardTableView } from './shard-rows-view.js';
import { type SourceView, sourceView } from './source-view.js';
import { type SpreadView, spreadView } from './spread-view.js';
import { type VerdictView, waitingVerdict, verdictView } from './verdict-view.js';
import type { ScreenState, ScreenLayout } from './view-common.js';

/*
 * The screen's view models and the builders that make them. Components receive these and
 * only lay them out: every number is already a string, every bar already a fraction, every
 * shard id already escaped and cut to its cell. Statistics come from the verdicts and from
 * judge/spread-histogram.ts; the view models only select, order and word them.
 *
 * Each panel's view model and builder lives in its own file beside its component; this file
 * builds a whole frame from them and re-exports what the rest of the program imports.
 */

export type {
  ShardSort,
  Tone,
  TerminalSize,
  ScreenContext,
  SourceState,
  SourceReading,
  WindowView,
  ScreenState,
  ScreenLayout,
} from './view-common.js';
export type { ShardCandidate } from '../judge/shard-candidates.js';
export { shardSorts, cellsPerBin } from './view-common.js';
export { buildWindowView } from './window-view.js';
export { screenLayout, shardColumns, shardRowCells } from './screen-layout.js';
export type { HeaderView } from './header-view.js';
export type { VerdictView } from './verdict-view.js';
export type { LoadBar, ShardRowView, ShardTableView } from './shard-rows-view.js';
export type { SpreadBin, SpreadView } from './spread-view.js';
export type { HistorySlot, HistoryView } from './history-view.js';
export type { IncidentItem, IncidentView } from './incident-view.js';
export type { SourceView } from './source-view.js';
export type { KeyHint, HelpView } from './key-help-view.js';
export { keyLineLabel } from './key-help-view.js';

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
