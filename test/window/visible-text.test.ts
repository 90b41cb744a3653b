// Untrusted text made inert. Sources: ECMA-48 (C0 set U+0000..U+001F with ESC = 0x1B and
// BEL = 0x07; C1 set 0x80..0x9F with CSI = 0x9B, NEL = 0x85; OSC = ESC ]), Unicode's
// general categories (UnicodeData.txt: U+202E, U+2066, U+200E, U+061C, U+200B, U+2060, U+FEFF
// are Cf; U+2028 is Zl) and the bidi controls of UAX #9, RFC 8259 section 7 (any character
// may be written as a \u escape inside a string; JSON.parse reads it back as the character).
import { describe, expect, it } from 'vitest';
import {
  codePointEscapes,
  jsonSafe,
  terminalMessage,
  terminalSafe,
} from '../../src/window/visible-text.js';

/** One id per kind of hidden character the escaping rules name (Unicode C0/C1 controls, bidi controls, zero-width characters). */
const hiddenIds = {
  osc: 't\u001b]0;owned\u0007',
  csi: 'c\u001b[2J',
  c1: 'n\u0085l\u009b1m',
  override: 'seat-\u202e71',
  zeroWidth: 'seat\u200b-17',
};

/** ECMA-48 C0 and C1 controls, the UAX #9 bidi controls and the zero-width characters. */
const shouldNeverAppear: number[] = [
  ...Array.from({ length: 0x20 }, (_, at) => at),
  ...Array.from({ length: 0x21 }, (_, at) => 0x7f + at),
  ...[0x202a, 0x202b, 0x202c, 0x202d, 0x202e, 0x2066, 0x2067, 0x2068, 0x2069],
  ...[0x200e, 0x200f, 0x061c, 0x200b, 0x200c, 0x200d, 0x2060, 0xfeff, 0x2028, 0x2029],
];

function hiddenCodePointsIn(text: string): number[] {
  return [...text]
    .map((character) => character.codePointAt(0) as number)
    .filter((codePoint) => shouldNeverAppear.includes(codePoint));
}

describe('jsonSafe', () => {
  it('leaves no control, bidi or zero-width character raw, and JSON.parse gives the id back', () => {
    for (const id of [...Object.values(hiddenIds), String.fromCodePoint(...shouldNeverAppear)]) {
      const line = jsonSafe(JSON.stringify({ shard: id, ids: [id] }));
      expect(hiddenCodePointsIn(line)).toEqual([]);
      expect(JSON.parse(line)).toEqual({ shard: id, ids: [id] });
    }
  });

  it('writes \\uXXXX escapes (a surrogate pair above U+FFFF) and leaves other text alone', () => {
    expect(jsonSafe(JSON.stringify('a\u202eb'))).toBe('"a\\u202eb"');
    // U+F0000 is private use (Co): the pair D B80 / DC00 in UTF-16.
    expect(jsonSafe(JSON.stringify('\u{f0000}'))).toBe('"\\udb80\\udc00"');
    expect(JSON.parse(jsonSafe(JSON.stringify('\u{f0000}')))).toBe('\u{f0000}');
    expect(jsonSafe(JSON.stringify({ shard: 'seat-17 座席 é', count: 3 }))).toBe(
      '{"shard":"seat-17 座席 é","count":3}',
    );
  });
});

describe('terminalMessage', () => {
  it('escapes what terminalSafe escapes, keeping line breaks and single backslashes', () => {
    for (const id of Object.values(hiddenIds)) {
      const shown = terminalMessage(`bad id ${id}\nnext \\ line`);
      expect(hiddenCodePointsIn(shown.replace(/\n/g, ''))).toEqual([]);
      expect(shown.endsWith('\nnext \\ line')).toBe(true);
    }
    expect(terminalMessage('a\u001b]0;x\u0007 b\u202e')).toBe('a\\x1b]0;x\\x07 b\\u{202e}');
    expect(terminalSafe('a\u001b]0;x\u0007 b\u202e')).toBe('a\\x1b]0;x\\x07 b\\u{202e}');
  });
});

describe('codePointEscapes', () => {
  it('names each hidden character by its code point', () => {
    expect(codePointEscapes('n\u0085 \u202e\u200b\u001b[1m')).toBe(
      'n\\u0085 \\u202e\\u200b\\u001b[1m',
    );
    expect(codePointEscapes('\u{f0000}x')).toBe('\\u{f0000}x');
    for (const id of Object.values(hiddenIds)) {
      expect(hiddenCodePointsIn(codePointEscapes(id))).toEqual([]);
    }
  });
});
