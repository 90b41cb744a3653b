import type { Episode } from './episodes.js';
import type { ReviewModel } from './review-model.js';
import { codePointEscapes } from '../window/visible-text.js';

/**
 * The words of a report, shared by the HTML and the Markdown renderings: numbers formatted
 * once, and the method section as plain sentences. Nothing here is escaped; each renderer
 * escapes what it writes (shard ids are untrusted input from the wire).
 */

/**
 * HTML text and attribute values: & < > " ' become character references, and controls,
 * bidi controls and invisible characters are shown by code point (`\u202e`), since a
 * character reference would still render them.
 */
export function escapeHtml(text: string): string {
  return htmlReferences(codePointEscapes(text));
}

function htmlReferences(text: string): string {
  return text
    .replace(/&/g, '&amp;')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/"/g, '&quot;')
    .replace(/'/g, '&#39;');
}

/**
 * Markdown table cells and text, readable as plain text and inert when rendered. Markdown
 * passes raw HTML through, so a `<` that could open a tag, a comment or an autolink (before
 * a letter, `/`, `!` or `?`) and an `&` that could open a character reference are
 * backslash-escaped (CommonMark 0.31.2, section 2.4: any ASCII punctuation may be), as is
 * Markdown's own punctuation; anything else stays as written (`< 1e-300`, quotes). Line
 * breaks, other controls, bidi controls and invisible characters are shown as \u escapes
 * so a cell stays one cell and reads as what it holds.
 */
export function escapeMarkdown(text: string): string {
  return codePointEscapes(
    text
      .replace(/[\\`*_{}[\]|~]/g, (c) => `\\${c}`)
      .replace(/<(?=[A-Za-z/!?])/g, '\\<')
      .replace(/&(?=#?[A-Za-z0-9]+;)/g, '\\&'),
  );
}

/** 12 345 678 as "12,345,678"; fractions rounded to whole requests. */
export function formatCount(value: number): string {
  return Math.round(value).toLocaleString('en-US');
}

/** A relative load as "1.53x". */
export function formatRelative(value: number): string {
  return `${value.toFixed(value >= 10 ? 1 : 2)}x`;
}

/** A p-value: "0.0213", "3.1e-12", "< 1e-300". */
export function formatP(value: number | null): string {
  if (value === null || !Number.isFinite(value)) return 'n/a';
  if (value <= 1e-300) return '< 1e-300';
  if (value >= 0.001) return value.toPrecision(3).replace(/\.?0+$/, '');
  return value.toExponential(1);
}

/** An instant as ISO-8601 UTC without milliseconds when they are zero. */
export function formatTime(ms: number): string {
  return new Date(ms).toISOString().replace('.000Z', 'Z');
}

/** A duration: "40 s", "2 min", "1 h 5 min". */
export function formatDuration(ms: number): string {
  const seconds = Math.round(ms / 1000);
  const hours = Math.floor(seconds / 3600);
  const minutes = Math.floor((seconds % 3600) / 60);
  const rest = seconds % 60;
  const parts: string[] = [];
  if (hours > 0) parts.push(`${hours} h`);
  if (minutes > 0) parts.push(`${minutes} min`);
  if (rest > 0 || parts.length === 0) parts.push(`${rest} s`);
  return parts.join(' ');
}

/** The episode table's columns, with each cell as text. */
export const episodeColumns = [
  'finding',
  'shard',
  'start',
  'end',
  'duration',
  'flagged windows',
  'peak load',
  'requests above fair share',
  'requests beyond the chance level',
  'least p',
  'cause from keys',
] as const;

/** One episode as the cells of {@link episodeColumns}. */
export function episodeCells(episode: Episode): string[] {
  const finding =
    episode.failoverWindows > 0 ? `${episode.finding} (failover pattern)` : episode.finding;
  return [
    finding,
    episode.shard ?? 'all shards',
    formatTime(episode.start),
    formatTime(episode.end),
    formatDuration(episode.end - episode.start),
    String(episode.windows),
    formatRelative(episode.peakRelative),
    episode.aboveFairShare === null ? 'n/a' : signed(episode.aboveFairShare),
    episode.beyondChance === null ? 'n/a' : signed(episode.beyondChance),
    formatP(episode.leastP),
    episode.causes.length === 0
      ? 'n/a'
      : episode.causes.map((c) => `${c.cause} (${c.windows} of ${episode.windows})`).join(', '),
  ];
}

/**
 * What made each hot episode's shard hot, from the keys of its requests: one line per
 * episode that has a key cause, with the sentence (and numbers) of its peak window.
 */
export function causeLines(model: ReviewModel): string[] {
  return model.episodes
    .filter((episode) => episode.peakCause !== null)
    .map(
      (episode) =>
        `${episode.shard ?? 'all shards'}, ${formatTime(episode.start)} to ${formatTime(episode.end)}: ${episode.peakCause}`,
    );
}

function signed(value: number): string {
  const rounded = Math.round(value);
  return rounded > 0 ? `+${formatCount(rounded)}` : formatCount(rounded);
}

/** The sentence every report opens with. */
export const caution =
  'These verdicts are statistical evidence against random placement under the stated null model, not certainty: by chance alone about alpha of all windows are flagged, and real traffic can break the model’s assumptions. Operators decide what happened and what to do.';

/** The summary as label/value pairs. */
export function summaryItems(model: ReviewModel): [string, string][] {
  const items: [string, string][] = [
    ['source', model.source],
    [
      'verdicts',
      model.judgedHere ? 'judged by this review' : 'as recorded by watch (not judged again)',
    ],
    [
      'span',
      model.windows === 0
        ? 'no windows'
        : `${formatTime(model.from)} to ${formatTime(model.to)} (${formatDuration(model.to - model.from)})`,
    ],
    ['windows', `${formatCount(model.windows)} of ${formatDuration(model.settings.windowMs)}`],
    ['requests', formatCount(model.requests)],
    ['shards', formatCount(model.shards)],
    [
      'windows by finding',
      Object.entries(model.findingWindows)
        .map(([finding, count]) => `${finding} ${formatCount(count)}`)
        .join(', ') +
        (model.failoverWindows > 0 ? `; failover pattern ${model.failoverWindows}` : ''),
    ],
    ['episodes', String(model.episodes.length)],
    [
      'incidents opened',
      model.incidentsOpened.length === 0
        ? 'none'
        : model.incidentsOpened
            .map((incident) => `${incident.finding} on ${incident.shard} at ${incident.since}`)
            .join('; '),
    ],
  ];
  return items;
}

/** The method section: headed paragraphs of plain text. */
export function methodParagraphs(model: ReviewModel): { heading: string; text: string }[] {
  const s = model.settings;
  const nullText =
    s.null === 'uniform'
      ? 'uniform: each request lands on each of the m shards with probability 1/m, independently of every other request, so the counts of a window are multinomial with equal shares.'
      : s.null === 'map'
        ? 'map: each request lands on shard i with its declared share p_i (the shard map or the simulated cluster’s hash ranges), independently, so the counts are multinomial with those shares. Loads are compared as relative loads x_i / (N p_i).'
        : `baseline: each shard’s expected share is learned from the trailing ${s.baselineWindows} windows (exponentially weighted; windows with an open incident or a flagged shard are not learned), so a finding means “hotter than this shard usually is”. Until enough windows are learned the declared shares are used.`;
  const windowsPerDay = 86_400_000 / s.hopMs;
  const expectedByChance = model.windows * s.alpha;
  return [
    { heading: 'Null model', text: `Random placement, ${nullText}` },
    {
      heading: 'Tests and alpha',
      text: `Every window asks four questions of its counts: is the fullest shard fuller than chance allows (P of a relative load this high on any shard), is the emptiest emptier, are there more empty shards, and is the spread wider (Pearson X^2, dispersion phi = X^2 / (m - 1))? Each test rejects at alpha = ${s.alpha}. The chance ceiling is the (1 - alpha) quantile of the fullest shard’s load under the null, the chance floor the alpha quantile of the emptiest. Per-shard p-values are single-step max-statistic adjusted (P of the fullest of all shards reaching this shard’s load), which controls the error over all shards at once.`,
    },
    {
      heading: 'Findings',
      text: `hotspot: the fullest-shard test rejects and the shard carries at least ${(1 + s.minExcess).toFixed(2)}x its fair share (--min-excess ${s.minExcess}). cold: the emptiest-shard or empty-count test rejects (a dead, drained or unrouted shard); cold and hotspot in one window is the failover pattern. uneven: the spread test rejects with phi above ${s.minDispersion} (times the learned phi once the cluster's usual spread is learned, outside exact mode) and no hotspot. too little traffic: the chance ceiling is above ${s.maxDetectable}x the fair share, so no hotspot could be told from chance. chance: none of these. Spread mode ${s.spread}: exact judges the counts as they are; robust divides them by the cluster's usual spread learned over recent windows (mean squared Pearson residual, flagged and outlying shards left out, upper 95% bound matched on the tail of clumped counts) so only shards standing out from it are flagged; auto turns robust when the spread test rejects or the learned spread is surely above 1 (16 shards or more).`,
    },
    {
      heading: 'Windows and episodes',
      text: `Windows of ${formatDuration(s.windowMs)}${s.hopMs !== s.windowMs ? `, starting every ${formatDuration(s.hopMs)} (they overlap)` : ''}, aligned to multiples of their length since the Unix epoch. An episode is a run of windows in which a shard is flagged with the same finding (or a window-wide finding holds), bridging gaps of fewer than ${s.clear} windows without it (--clear, the rule that clears an incident), from the start of its first flagged window to the end of its last; its requests above fair share sum count - N p_i over its windows, and its requests beyond the chance level sum what lies above the chance ceiling (below the floor for a cold shard). At most ${s.maxFlagged} shards are flagged per window (--max-flagged), the most significant first. An incident opens after ${s.confirm} flagged windows in a row and clears after ${s.clear} clean ones; by chance alone about ${formatRate(windowsPerDay * s.alpha ** s.confirm)} false incidents a day are expected (windows per day x alpha^confirm, an approximation that treats windows as independent).`,
    },
    {
      heading: 'Assumptions',
      text: `Requests are placed independently of one another. Real traffic repeats keys, which makes counts over-dispersed (phi well above 1) even with perfect hashing: the robust spread mode and N_eff = N / phi account for that. The declared shares must be the real ones: judged against equal shares, unequal hash ranges look uneven. ${s.declaredUniverse ? 'The shard universe was declared, so silent shards count as empty.' : 'The shard universe was not declared: a shard that never reported is invisible, and the cold tests were off.'}`,
    },
    {
      heading: 'Cautions',
      text: `${caution} Over this review’s ${formatCount(model.windows)} windows about ${formatRate(expectedByChance)} would be flagged at alpha ${s.alpha} by chance alone, so a lone window is weak evidence; episodes of several windows and the size of the excess carry more. A significant excess can be too small to matter, and a large one can be chance in a quiet window: read the p-values beside the loads.`,
    },
  ];
}

function formatRate(value: number): string {
  if (value >= 10) return formatCount(value);
  if (value >= 0.01) return value.toFixed(2);
  return value.toExponential(1);
}
