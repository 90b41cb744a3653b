import type { Judgement } from '../judge/judgement.js';
import { formatClock, formatP } from './display-numbers.js';
import { displayWidth, wireLabel, type LinePart } from './terminal-text.js';
import {
  type Tone,
  type WindowView,
  type ScreenLayout,
  findingSymbols,
  findingTones,
} from './view-common.js';

/* The incident line's view model. */

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

export function incidentView(view: WindowView | null, layout: ScreenLayout): IncidentView {
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
