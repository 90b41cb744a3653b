// Shard ids with terminal controls, bidi overrides and zero-width characters, through every
// place `watch` and `review` show them. Sources: ECMA-48 (C0 set with ESC 0x1B and BEL 0x07,
// OSC = ESC ], CSI = ESC [ or 0x9B; C1 set 0x80..0x9F with NEL = 0x85), Unicode's general
// categories and UAX #9's bidi controls (U+202A..U+202E, U+2066..U+2069, U+200E, U+200F,
// U+061C), the zero-width characters U+200B..U+200D, U+2060, U+FEFF (category Cf),
// RFC 8259 (a \u escape in a string parses to the character it names).
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { runCli } from '../review/cli-run.js';

const hiddenIds = [
  't\u001b]0;owned\u0007', // OSC: sets the terminal title
  'c\u001b[2J', // CSI: clears the screen
  'n\u0085l\u009b1m', // C1: NEL and the one-byte CSI
  'seat-\u202e71', // right-to-left override
  'seat\u200b-17', // zero-width space
];

const hidden: number[] = [
  ...Array.from({ length: 0x20 }, (_, at) => at).filter((c) => c !== 0x0a),
  ...Array.from({ length: 0x21 }, (_, at) => 0x7f + at),
  ...[0x202a, 0x202b, 0x202c, 0x202d, 0x202e, 0x2066, 0x2067, 0x2068, 0x2069],
  ...[0x200e, 0x200f, 0x061c, 0x200b, 0x200c, 0x200d, 0x2060, 0xfeff],
];

function rawHidden(text: string): string[] {
  return [...text]
    .filter((character) => hidden.includes(character.codePointAt(0) as number))
    .map((character) => `U+${(character.codePointAt(0) as number).toString(16)}`);
}

function allStrings(value: unknown, into: Set<string> = new Set()): Set<string> {
  if (typeof value === 'string') into.add(value);
  else if (Array.isArray(value)) for (const item of value) allStrings(item, into);
  else if (value !== null && typeof value === 'object') {
    for (const [key, item] of Object.entries(value)) {
      into.add(key);
      allStrings(item, into);
    }
  }
  return into;
}

const dir = mkdtempSync(join(tmpdir(), 'shardwise-untrusted-'));
const startMs = Date.parse('2025-12-01T00:00:00Z');

/** 64 shards for 12 windows of 10 s; the five hidden ids carry twice the load in windows 3..8. */
function input(): string {
  const plain = Array.from({ length: 59 }, (_, at) => `s-${at}`);
  const lines: string[] = [];
  for (let window = 0; window < 12; window++) {
    for (const shard of [...hiddenIds, ...plain]) {
      const hot = hiddenIds.includes(shard) && window >= 3 && window < 9;
      lines.push(
        JSON.stringify({ ts: startMs + window * 10_000, shard, count: hot ? 2000 : 1000 }),
      );
    }
  }
  return lines.join('\n') + '\n';
}

describe('untrusted shard ids', () => {
  const records = join(dir, 'hidden.jsonl');
  writeFileSync(records, input());
  const recording = join(dir, 'hidden.rec');

  it('reach neither the terminal nor the verdict lines raw; the lines parse back to the ids', async () => {
    const { code, out, err } = await runCli([
      'watch',
      '--input',
      records,
      '--no-ui',
      '--no-metrics',
      '--record',
      recording,
    ]);
    expect(code).toBe(0);
    // Every id opened an incident, so the summary names each one, escaped.
    expect(err).toMatch(/incidents: 5 opened/);
    expect(err).toContain('hotspot on t\\x1b]0;owned\\x07 since');
    expect(err).toContain('hotspot on seat-\\u{202e}71 since');
    expect(rawHidden(err)).toEqual([]);
    expect(rawHidden(out)).toEqual([]);
    const fromLines = new Set<string>();
    for (const line of out.trim().split('\n')) allStrings(JSON.parse(line), fromLines);
    for (const id of hiddenIds) expect(fromLines.has(id)).toBe(true);
    const recorded = readFileSync(recording, 'utf8');
    expect(rawHidden(recorded)).toEqual([]);
    const fromRecording = new Set<string>();
    for (const line of recorded.trim().split('\n')) allStrings(JSON.parse(line), fromRecording);
    for (const id of hiddenIds) expect(fromRecording.has(id)).toBe(true);
  });

  it('are shown by code point in the HTML and Markdown reports', async () => {
    const html = join(dir, 'hidden.html');
    const markdown = join(dir, 'hidden.md');
    const { code, err } = await runCli([
      'review',
      '--input',
      records,
      '--out',
      html,
      '--markdown',
      markdown,
    ]);
    expect(code).toBe(0);
    expect(rawHidden(err)).toEqual([]);
    for (const report of [readFileSync(html, 'utf8'), readFileSync(markdown, 'utf8')]) {
      expect(rawHidden(report)).toEqual([]);
      expect(report).toContain('seat-\\u202e71');
      expect(report).toContain('seat\\u200b-17');
      expect(report).toMatch(/n\\u0085l\\u009b1m/);
    }
  });

  it('are escaped in error messages', async () => {
    const map = join(dir, 'bad-map.json');
    writeFileSync(map, JSON.stringify({ 'seat-\u202e71\u0085': -1 }));
    const { code, err } = await runCli(['odds', '--shard-map', map, '--requests', '10']);
    expect(code).toBe(2);
    expect(err).toContain('seat-\\u{202e}71\\x85');
    expect(rawHidden(err)).toEqual([]);
  });
});
