import { formatWindowLength } from './display-numbers.js';
import { displayWidth, fitParts, terminalSafe, type LinePart } from './terminal-text.js';
import type { Tone, ScreenState, ScreenLayout } from './view-common.js';

/* The header line's view model. */

export interface HeaderView {
  readonly title: string;
  readonly facts: string;
  /** `LIVE`, `PAUSED` or `ENDED` with its symbol. */
  readonly mode: string;
  readonly modeTone: Tone;
  /** Which window is on show, e.g. `window 12 of 40 · 3 newer`. */
  readonly position: string;
}

export function headerView(
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
