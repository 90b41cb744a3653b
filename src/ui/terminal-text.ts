/**
 * Text from the wire made safe for a terminal, and measured in terminal cells.
 *
 * Shard ids and keys are untrusted: a producer can put an escape sequence in one that
 * moves the cursor, clears the screen, sets the window title or writes to the clipboard
 * (OSC 52). Ink passes colour and OSC sequences through, so every id is passed through
 * {@link terminalSafe} (in src/window/visible-text.ts, shared with the CLI's stderr lines and
 * the reports) before it reaches a component. Unsafe characters are escaped, not
 * dropped: an operator should see that an id carries an escape sequence, since that is a
 * finding about the producer in itself.
 */

import stringWidth from 'string-width';
import { terminalSafe } from '../window/visible-text.js';

export { terminalSafe };

/** Graphemes, so a cut never splits a character from its combining marks. */
const graphemes = new Intl.Segmenter('en', { granularity: 'grapheme' });

/**
 * Terminal cells the (already safe) text takes, measured by string-width, the library Ink
 * itself lays text out with (UAX #11 East Asian Width, emoji as two cells, combining marks
 * as none), so the screen and Ink never disagree about where a line ends. O(length).
 * Example: displayWidth('座席') = 4.
 */
export function displayWidth(text: string): number {
  return stringWidth(text);
}

/**
 * The (already safe) text cut to at most `width` cells, ending in `…` when cut. Never
 * splits a wide character: a cut that would leave half of one stops before it.
 * O(length). Example: fitWidth('seat-inventory-17', 8) is 'seat-in…'.
 */
export function fitWidth(text: string, width: number): string {
  if (width <= 0) return '';
  if (displayWidth(text) <= width) return text;
  let out = '';
  let used = 0;
  for (const { segment } of graphemes.segment(text)) {
    const cells = stringWidth(segment);
    if (used + cells > width - 1) break;
    out += segment;
    used += cells;
  }
  return out + '…';
}

/** One item of a line composed by {@link fitParts}. */
export interface LinePart {
  /** The item as it reads when there is room. */
  readonly text: string;
  /** A shorter form, used before the item is dropped; none when it has no shorter form. */
  readonly short?: string;
  /** Lower keeps longer: items are shortened, then dropped, highest rank first; 0 is never dropped. */
  readonly rank: number;
}

/**
 * A line of items joined by `separator` that fits `width` cells without cutting any item.
 * `shorten first` (headers, status lines): every item takes its short form, highest rank
 * first, before any is dropped whole, highest rank first. `drop first` (sentences of
 * evidence): each item in turn, highest rank first, takes its short form and then goes, so
 * the leading clause keeps its full words longest. Rank 0 is never dropped; only when the
 * items of rank 0 alone do not fit is the line cut (with `…`). O(parts^2 x length).
 * Example: fitParts([{ text: 'alpha 0.001', rank: 0 }, { text: 'scenario demo', rank: 1 }],
 * 14) is 'alpha 0.001'.
 */
export function fitParts(
  parts: readonly LinePart[],
  width: number,
  separator = ' · ',
  mode: 'shorten first' | 'drop first' = 'shorten first',
): string {
  const forms = parts.map((part) => part.text);
  const kept = parts.map(() => true);
  const line = () => forms.filter((_, index) => kept[index]).join(separator);
  const fits = () => displayWidth(line()) <= width;
  const byRank = parts
    .map((part, index) => ({ part, index }))
    .sort((a, b) => b.part.rank - a.part.rank || b.index - a.index);
  const shorten = (part: LinePart, index: number) => {
    if (part.short !== undefined) forms[index] = part.short;
  };
  const drop = (part: LinePart, index: number) => {
    if (part.rank > 0) kept[index] = false;
  };
  for (const step of mode === 'shorten first' ? [shorten, drop] : [null]) {
    for (const { part, index } of byRank) {
      if (fits()) return line();
      if (step !== null) {
        step(part, index);
        continue;
      }
      shorten(part, index);
      if (fits()) return line();
      drop(part, index);
    }
  }
  return fits() ? line() : fitWidth(line(), width);
}

/** The text padded with spaces to exactly `width` cells (cut first when longer). */
export function padWidth(text: string, width: number, align: 'left' | 'right' = 'left'): string {
  const fitted = fitWidth(text, width);
  const padding = ' '.repeat(Math.max(0, width - displayWidth(fitted)));
  return align === 'left' ? fitted + padding : padding + fitted;
}

/**
 * A shard id or key from the wire, ready for a cell of `width`: escaped, then cut.
 * Example: wireLabel('s-1\u0007', 12) is 's-1\\x07'.
 */
export function wireLabel(text: string, width: number): string {
  return fitWidth(terminalSafe(text), width);
}
