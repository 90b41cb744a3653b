import { displayWidth } from './terminal-text.js';
import {
  shardSorts,
  type ScreenContext,
  type ScreenState,
  type ScreenLayout,
  findingLegend,
} from './view-common.js';

/* The key line's and the help overlay's view models. */

export interface KeyHint {
  readonly key: string;
  readonly action: string;
}

export interface HelpView {
  readonly title: string;
  readonly keys: readonly KeyHint[];
  readonly panels: readonly { readonly name: string; readonly text: string }[];
}

/** The keys, as the bottom line and the help show them. */
export function keyHints(state: ScreenState, layout: ScreenLayout): readonly KeyHint[] {
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

export function helpView(context: ScreenContext): HelpView {
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
