import { describe, expect, it } from 'vitest';
import {
  displayWidth,
  fitParts,
  fitWidth,
  padWidth,
  terminalSafe,
  wireLabel,
} from '../../src/ui/terminal-text.js';

// Escape sequences from ECMA-48 (CSI, OSC, C1 controls) and xterm's control sequences
// (OSC 0 title, OSC 52 clipboard): common practice of terminal attacks through log text.
const hostile = [
  ['clear screen', 's-1\u001b[2J'],
  ['colour', '\u001b[31mred\u001b[0m'],
  ['window title', '\u001b]0;owned\u0007'],
  ['clipboard write', '\u001b]52;c;ZWNobyBoaQ==\u001b\\'],
  ['8-bit CSI', 's-\u009b2J'],
  ['backspace over the id', 'good\b\b\b\bevil'],
  ['carriage return', 'evil\rgood'],
  ['newline', 'a\nb'],
  ['delete', 'a\u007f'],
] as const;

describe('terminalSafe', () => {
  it.each(hostile)('leaves no control character in %s', (_, id) => {
    const safe = terminalSafe(id);
    expect(safe).not.toMatch(/[\u0000-\u001f\u007f-\u009f]/);
  });

  it('shows each escape visibly instead of dropping it', () => {
    expect(terminalSafe('s-1\u001b[2J')).toBe('s-1\\x1b[2J');
    expect(terminalSafe('\u001b]0;owned\u0007')).toBe('\\x1b]0;owned\\x07');
    expect(terminalSafe('s-\u009b2J')).toBe('s-\\x9b2J');
  });

  it('doubles backslashes so a literal "\\x1b" in an id cannot pass for an escaped one', () => {
    expect(terminalSafe('a\\x1b')).toBe('a\\\\x1b');
    expect(terminalSafe('a\u001b')).not.toBe(terminalSafe('a\\x1b'));
  });

  it('escapes bidi overrides, zero-width characters and a leading combining mark', () => {
    // U+202E RIGHT-TO-LEFT OVERRIDE, U+200B ZERO WIDTH SPACE, U+2066 LEFT-TO-RIGHT ISOLATE,
    // U+0301 COMBINING ACUTE ACCENT (Unicode character database).
    expect(terminalSafe('s-1\u202e7')).toBe('s-1\\u{202e}7');
    expect(terminalSafe('s\u200b1')).toBe('s\\u{200b}1');
    expect(terminalSafe('\u2066x')).toBe('\\u{2066}x');
    expect(terminalSafe('\u0301x')).toBe('\\u{301}x');
    // Inside a word a combining mark is ordinary text.
    expect(terminalSafe('cafe\u0301')).toBe('cafe\u0301');
  });

  it('keeps ordinary ids, accents and CJK as they are', () => {
    for (const id of ['seat-17', 'node-001', 'partition 3', 'Zürich-a', '座席-7']) {
      expect(terminalSafe(id)).toBe(id);
    }
  });
});

describe('widths', () => {
  it('counts CJK as two cells and combining marks as none (UAX #11)', () => {
    expect(displayWidth('seat-17')).toBe(7);
    expect(displayWidth('座席')).toBe(4);
    expect(displayWidth('cafe\u0301')).toBe(4);
  });

  it('cuts to the width with an ellipsis, never half a wide character', () => {
    expect(fitWidth('seat-inventory-17', 8)).toBe('seat-in…');
    expect(displayWidth(fitWidth('seat-inventory-17', 8))).toBe(8);
    expect(fitWidth('座席座席', 4)).toBe('座…');
    expect(fitWidth('short', 8)).toBe('short');
    expect(fitWidth('anything', 0)).toBe('');
  });

  it('pads to exactly the width on either side', () => {
    expect(padWidth('ab', 5)).toBe('ab   ');
    expect(padWidth('ab', 5, 'right')).toBe('   ab');
    expect(padWidth('座', 3)).toBe('座 ');
  });

  it('bounds an id from the wire after escaping it', () => {
    const label = wireLabel('\u001b[2J\u001b[2J\u001b[2J', 12);
    expect(label).toBe('\\x1b[2J\\x1b…');
    expect(displayWidth(label)).toBe(12);
  });
});

describe('fitParts', () => {
  const header = [
    { text: 'scenario demo (seed 1)', rank: 3 },
    { text: '64 shards', rank: 2 },
    { text: '10 s windows', short: '10 s win', rank: 1 },
    { text: 'alpha 0.001', short: 'α 0.001', rank: 0 },
  ];

  it('keeps every item whole: short forms first, then whole items dropped, rank 0 last', () => {
    expect(fitParts(header, 80)).toBe(
      'scenario demo (seed 1) · 64 shards · 10 s windows · alpha 0.001',
    );
    expect(fitParts(header, 55)).toBe('scenario demo (seed 1) · 64 shards · 10 s win · α 0.001');
    expect(fitParts(header, 40)).toBe('64 shards · 10 s win · α 0.001');
    expect(fitParts(header, 7)).toBe('α 0.001');
    for (const width of [7, 20, 31, 40, 55, 80]) {
      const line = fitParts(header, width);
      expect(displayWidth(line)).toBeLessThanOrEqual(width);
      expect(line).not.toContain('…');
    }
  });

  it('drop first: a sentence loses its later clauses before its first is shortened', () => {
    const sentence = [
      { text: 'Emptiest seat-42: 0 req, 0.00x fair share', short: 'Emptiest seat-42', rank: 0 },
      { text: 'p < 1e-300', rank: 1 },
      { text: '1 empty, 0.1 expected', rank: 2 },
    ];
    expect(fitParts(sentence, 60, '; ', 'drop first')).toBe(
      'Emptiest seat-42: 0 req, 0.00x fair share; p < 1e-300',
    );
    expect(fitParts(sentence, 30, '; ', 'drop first')).toBe('Emptiest seat-42');
  });
});
