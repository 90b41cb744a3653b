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

import { terminalSafe } from '../window/visible-text.js';

export { terminalSafe };

/** Zero-width marks that draw on the previous cell. */
const combining = /[\p{Mn}\p{Me}]/u;

/**
 * Cells a code point takes: 0 for combining marks, 2 for East Asian wide and fullwidth
 * forms and the emoji blocks, 1 otherwise. The ranges are the wide blocks of Unicode's
 * East Asian Width property (UAX #11), coarsened to whole blocks; a terminal may differ on
 * a few emoji, which at worst shortens a line by a cell.
 */
function cellsOf(codePoint: number, character: string): number {
  if (combining.test(character)) return 0;
  if (
    (codePoint >= 0x1100 && codePoint <= 0x115f) ||
    (codePoint >= 0x2e80 && codePoint <= 0xa4cf && codePoint !== 0x303f) ||
    (codePoint >= 0xac00 && codePoint <= 0xd7a3) ||
    (codePoint >= 0xf900 && codePoint <= 0xfaff) ||
    (codePoint >= 0xfe30 && codePoint <= 0xfe4f) ||
    (codePoint >= 0xff00 && codePoint <= 0xff60) ||
    (codePoint >= 0xffe0 && codePoint <= 0xffe6) ||
    (codePoint >= 0x1f300 && codePoint <= 0x1f64f) ||
    (codePoint >= 0x1f900 && codePoint <= 0x1f9ff) ||
    (codePoint >= 0x20000 && codePoint <= 0x3fffd)
  ) {
    return 2;
  }
  return 1;
}

/** Terminal cells the (already safe) text takes. O(length). Example: displayWidth('座席') = 4. */
export function displayWidth(text: string): number {
  let width = 0;
  for (const character of text) width += cellsOf(character.codePointAt(0) as number, character);
  return width;
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
  for (const character of text) {
    const cells = cellsOf(character.codePointAt(0) as number, character);
    if (used + cells > width - 1) break;
    out += character;
    used += cells;
  }
  return out + '…';
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
