/**
 * Untrusted text (shard ids, keys) made visible and inert wherever it is shown: on a
 * terminal, in JSON lines, in the HTML and Markdown reports.
 *
 * A producer can put anything in an id: an escape sequence that retitles the terminal or
 * clears it (ESC ] 0 ; title BEL, CSI), a C1 control (U+009B is a CSI on its own), a bidi
 * override that makes one id read as another, a zero-width character that makes two ids
 * look the same. Such characters are escaped, not dropped: that an id carries one is a
 * finding about the producer in itself. One set of characters is escaped everywhere
 * (controls and the `invisible` categories below); only the notation differs with the target.
 */

/** Code points below 0x20, DEL and the C1 controls U+0080..U+009F (ECMA-48's C0 and C1 sets). */
function isControl(codePoint: number): boolean {
  return codePoint < 0x20 || (codePoint >= 0x7f && codePoint <= 0x9f);
}

/**
 * Invisible or layout-changing characters, by Unicode general category: format characters
 * (Cf: the bidi embeddings, overrides and isolates U+202A..U+202E and U+2066..U+2069, the
 * marks U+200E, U+200F and U+061C, zero-width U+200B..U+200D, U+2060, the byte-order mark
 * U+FEFF), line and paragraph separators (Zl, Zp), private-use (Co), unassigned (Cn) and
 * lone surrogates (Cs).
 */
const invisible = /[\p{Cf}\p{Zl}\p{Zp}\p{Co}\p{Cn}\p{Cs}]/u;
const hiddenCharacters = /[\u0000-\u001f\u007f-\u009f\p{Cf}\p{Zl}\p{Zp}\p{Co}\p{Cn}\p{Cs}]/gu;
const hiddenOutsideJsonEscapes = /[\u007f-\u009f\p{Cf}\p{Zl}\p{Zp}\p{Co}\p{Cn}]/gu;
/** Zero-width marks that draw on the previous cell. */
const combining = /[\p{Mn}\p{Me}]/u;

/**
 * The text with every control character, escape sequence introducer and invisible
 * character replaced by a visible escape (`\x1b`, `\x9b`, `\u{202e}`) and each backslash
 * doubled, so an escape cannot be forged by a literal `\x1b` in the id. A combining mark
 * at the start (which would draw on whatever precedes the id) is escaped too. O(length).
 * Example: terminalSafe('s-1\u001b[2J') is 's-1\\x1b[2J'.
 */
export function terminalSafe(text: string): string {
  let out = '';
  let first = true;
  for (const character of text) {
    const codePoint = character.codePointAt(0) as number;
    if (character === '\\') out += '\\\\';
    else if (isControl(codePoint)) out += `\\x${codePoint.toString(16).padStart(2, '0')}`;
    else if (invisible.test(character) || (first && combining.test(character))) {
      out += `\\u{${codePoint.toString(16)}}`;
    } else out += character;
    first = false;
  }
  return out;
}

/**
 * A message for a terminal (an error, a note, a progress line) that may quote untrusted
 * text: the characters of {@link terminalSafe} escaped in its notation, but line breaks
 * kept and backslashes left single, since the message is ours and ids in it are quoted.
 * O(length). Example: terminalMessage('bad id "a\u001b]0;x\u0007"') is
 * 'bad id "a\\x1b]0;x\\x07"'.
 */
export function terminalMessage(text: string): string {
  return text.replace(hiddenCharacters, (character) => {
    if (character === '\n') return character;
    const codePoint = character.codePointAt(0) as number;
    return isControl(codePoint)
      ? `\\x${codePoint.toString(16).padStart(2, '0')}`
      : `\\u{${codePoint.toString(16)}}`;
  });
}

/**
 * A JSON text (as JSON.stringify writes it) with every hidden character that JSON.stringify
 * leaves raw written as a `\uXXXX` escape (a pair of them above U+FFFF): DEL, the C1
 * controls, format characters, line and paragraph separators, private-use and unassigned
 * code points. JSON.stringify already escapes U+0000..U+001F and lone surrogates. These
 * characters occur only inside strings of such a text, and RFC 8259 lets any character be
 * escaped there, so JSON.parse gives back the same value. O(length).
 * Example: jsonSafe(JSON.stringify('a\u202e')) is '"a\\u202e"'.
 */
export function jsonSafe(json: string): string {
  return json.replace(hiddenOutsideJsonEscapes, (character) => {
    let out = '';
    for (let at = 0; at < character.length; at++) {
      out += `\\u${character.charCodeAt(at).toString(16).padStart(4, '0')}`;
    }
    return out;
  });
}

/**
 * Text for a report (HTML or Markdown, before their own escaping) with each hidden
 * character shown as its code point, `\u202e` (`\u{f0000}` above U+FFFF): character
 * references would still render the character, so the report names it instead. O(length).
 * Example: codePointEscapes('s-1\u200b') is 's-1\\u200b'.
 */
export function codePointEscapes(text: string): string {
  return text.replace(hiddenCharacters, (character) => {
    const codePoint = character.codePointAt(0) as number;
    return codePoint > 0xffff
      ? `\\u{${codePoint.toString(16)}}`
      : `\\u${codePoint.toString(16).padStart(4, '0')}`;
  });
}
