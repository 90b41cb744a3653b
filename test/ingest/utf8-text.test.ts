// Invalid UTF-8 kept apart. Sources: the Unicode Standard's table of well-formed UTF-8 byte
// sequences (chapter 3, "UTF-8"), the WHATWG Encoding standard's UTF-8 decoder as Node's
// TextDecoder implements it (fatal mode throws on exactly the ill-formed inputs).
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { decodeUtf8Marked, isWellFormedText } from '../../src/ingest/utf8-text.js';

const fatal = new TextDecoder('utf-8', { ignoreBOM: true, fatal: true });

function wellFormedByReference(bytes: Uint8Array): boolean {
  try {
    fatal.decode(bytes);
    return true;
  } catch {
    return false;
  }
}

describe('decodeUtf8Marked', () => {
  it('keeps a\\xff and a\\xfe apart, where a decoder makes both a\\uFFFD (WHATWG Encoding)', () => {
    const ff = decodeUtf8Marked(Uint8Array.of(0x61, 0xff));
    const fe = decodeUtf8Marked(Uint8Array.of(0x61, 0xfe));
    expect(new TextDecoder().decode(Uint8Array.of(0x61, 0xff))).toBe('a\uFFFD');
    expect(ff).not.toBe(fe);
    expect(isWellFormedText(ff)).toBe(false);
    expect(isWellFormedText(fe)).toBe(false);
  });

  it('reads a genuine U+FFFD (EF BF BD) as valid text (Unicode: U+FFFD is a character)', () => {
    const text = decodeUtf8Marked(Uint8Array.of(0x61, 0xef, 0xbf, 0xbd));
    expect(text).toBe('a\uFFFD');
    expect(isWellFormedText(text)).toBe(true);
  });

  it('marks the ill-formed sequences of the Unicode table: overlong, surrogate, past U+10FFFF, cut', () => {
    // From the Unicode Standard's table of well-formed byte sequences: C0 AF (overlong '/'),
    // E0 80 AF (overlong), ED A0 80 (U+D800 encoded), F4 90 80 80 (past U+10FFFF),
    // E2 82 (a cut three-byte sequence), a lone continuation byte 80.
    for (const bad of [
      [0xc0, 0xaf],
      [0xe0, 0x80, 0xaf],
      [0xed, 0xa0, 0x80],
      [0xf4, 0x90, 0x80, 0x80],
      [0xe2, 0x82],
      [0x80],
    ]) {
      expect(isWellFormedText(decodeUtf8Marked(Uint8Array.from(bad)))).toBe(false);
    }
    // Their well-formed neighbours: U+00AF, U+082F, U+D7FF, U+10FFFF, U+20AC.
    for (const good of [
      [0xc2, 0xaf],
      [0xe0, 0xa0, 0xaf],
      [0xed, 0x9f, 0xbf],
      [0xf4, 0x8f, 0xbf, 0xbf],
      [0xe2, 0x82, 0xac],
    ]) {
      const bytes = Uint8Array.from(good);
      expect(decodeUtf8Marked(bytes)).toBe(fatal.decode(bytes));
    }
  });

  it('agrees with the fatal WHATWG decoder on what is well-formed, and on the text when it is', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 24 }), (bytes) => {
        const text = decodeUtf8Marked(bytes);
        const valid = wellFormedByReference(bytes);
        expect(isWellFormedText(text)).toBe(valid);
        if (valid) expect(text).toBe(fatal.decode(bytes));
      }),
      { numRuns: 3000 },
    );
  });

  it('never gives two different byte strings the same text (so ids stay apart)', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 8 }), fc.uint8Array({ maxLength: 8 }), (a, b) => {
        if (Buffer.compare(a, b) !== 0) expect(decodeUtf8Marked(a)).not.toBe(decodeUtf8Marked(b));
      }),
      { numRuns: 3000 },
    );
  });

  it('decodes only the span it is given', () => {
    const bytes = Uint8Array.of(0xff, 0x73, 0x2d, 0x31, 0xfe);
    expect(decodeUtf8Marked(bytes, 1, 4)).toBe('s-1');
  });

  it('cannot be paired into a valid character by a JSON high-surrogate escape before the byte (RFC 8259 \\u escapes)', () => {
    const line = Uint8Array.of(...new TextEncoder().encode('"\\ud800'), 0xff, 0x22);
    const parsed = JSON.parse(decodeUtf8Marked(line)) as string;
    expect(isWellFormedText(parsed)).toBe(false);
  });
});

describe('isWellFormedText', () => {
  it('is false for lone surrogates from JSON escapes (RFC 8259 section 8.2), true for pairs', () => {
    expect(isWellFormedText(JSON.parse('"\\ud800"') as string)).toBe(false);
    expect(isWellFormedText(JSON.parse('"a\\udc00"') as string)).toBe(false);
    expect(isWellFormedText(JSON.parse('"\\ud83d\\ude00"') as string)).toBe(true);
  });
});
