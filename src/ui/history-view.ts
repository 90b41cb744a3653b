import type { Judgement } from '../judge/judgement.js';
import { formatClock } from './display-numbers.js';
import { displayWidth, fitWidth, type LinePart } from './terminal-text.js';
import {
  type Tone,
  type WindowView,
  type ScreenLayout,
  type WindowState,
  findingSymbols,
  findingTones,
  legendItems,
} from './view-common.js';

/* The history strip's view model: one slot per kept window. */

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

/** The state a window is shown in: its pattern or lead finding, or easing (see WindowState). */
function windowStateOf(j: Judgement): WindowState {
  if (j.pattern !== null) return j.pattern;
  const lead = j.findings[0];
  return lead === 'chance' && j.incidents.length > 0 ? 'easing' : lead;
}

export function historyView(
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
