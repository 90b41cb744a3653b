import { describe, expect, it } from 'vitest';
import type { Episode } from '../../src/review/episodes.js';
import {
  episodeCells,
  escapeHtml,
  escapeMarkdown,
  formatCount,
  formatDuration,
  formatP,
  formatRelative,
  formatTime,
  methodParagraphs,
} from '../../src/review/report-text.js';
import type { ReviewModel } from '../../src/review/review-model.js';

const start = Date.UTC(2025, 11, 1);

describe('the report’s number formats', () => {
  it('the doc comments’ examples', () => {
    expect(formatCount(12_345_678)).toBe('12,345,678');
    expect(formatCount(2.5)).toBe('3');
    expect(formatRelative(1.53)).toBe('1.53x');
    expect(formatRelative(12.34)).toBe('12.3x');
    expect(formatP(0.0213)).toBe('0.0213');
    expect(formatP(3.1e-12)).toBe('3.1e-12');
    expect(formatP(1e-301)).toBe('< 1e-300');
    expect(formatDuration(40_000)).toBe('40 s');
    expect(formatDuration(120_000)).toBe('2 min');
    expect(formatDuration(3_900_000)).toBe('1 h 5 min');
  });

  it('p-values: trailing zeros go, none is a number that is not there', () => {
    expect(formatP(0.5)).toBe('0.5');
    expect(formatP(1)).toBe('1');
    expect(formatP(0.001)).toBe('0.001');
    expect(formatP(null)).toBe('n/a');
    expect(formatP(Number.NaN)).toBe('n/a');
  });

  it('times in ISO-8601 UTC, milliseconds only when there are some; durations of 0 are 0 s', () => {
    // 2025-12-01T00:00:00Z is 1764547200000 ms after the Unix epoch (common practice).
    expect(formatTime(1764547200000)).toBe('2025-12-01T00:00:00Z');
    expect(formatTime(1764547200005)).toBe('2025-12-01T00:00:00.005Z');
    expect(formatDuration(0)).toBe('0 s');
    expect(formatDuration(3_600_000)).toBe('1 h');
  });
});

describe('escaping', () => {
  it('HTML: the five characters become references, controls their code points', () => {
    expect(escapeHtml(`<a href="x">'&'</a>`)).toBe(
      '&lt;a href=&quot;x&quot;&gt;&#39;&amp;&#39;&lt;/a&gt;',
    );
  });

  it('Markdown: punctuation and what could open HTML escaped, a lone < kept (CommonMark 0.31.2, 2.4)', () => {
    expect(escapeMarkdown('a|b')).toBe('a\\|b');
    expect(escapeMarkdown('<b>x</b>')).toBe('\\<b>x\\</b>');
    expect(escapeMarkdown('p < 1e-300')).toBe('p < 1e-300');
    expect(escapeMarkdown('&amp; & more')).toBe('\\&amp; & more');
    expect(escapeMarkdown('*_`~')).toBe('\\*\\_\\`\\~');
  });
});

describe('episodeCells', () => {
  const episode: Episode = {
    finding: 'hotspot',
    shard: 'seat-17',
    start: start + 20_000,
    end: start + 90_000,
    windows: 7,
    peakRelative: 1.434,
    peakAt: start + 40_000,
    aboveFairShare: 2345.4,
    beyondChance: -12,
    leastP: 2.1e-9,
    failoverWindows: 0,
    causes: [],
    peakCause: null,
  } as Episode;

  it('one cell per column, signed request counts, n/a where nothing is known', () => {
    expect(episodeCells(episode)).toEqual([
      'hotspot',
      'seat-17',
      '2025-12-01T00:00:20Z',
      '2025-12-01T00:01:30Z',
      '1 min 10 s',
      '7',
      '1.43x',
      '+2,345',
      '-12',
      '2.1e-9',
      'n/a',
    ]);
    const windowWide = episodeCells({
      ...episode,
      finding: 'uneven',
      shard: null,
      aboveFairShare: null,
      beyondChance: null,
      leastP: null,
      failoverWindows: 2,
    });
    expect(windowWide[0]).toBe('uneven (failover pattern)');
    expect(windowWide[1]).toBe('all shards');
    expect(windowWide.slice(7, 10)).toEqual(['n/a', 'n/a', 'n/a']);
  });
});

describe('methodParagraphs', () => {
  it('the false-incident rate: windows per day x alpha^confirm', () => {
    // 10 s hops: 8640 windows a day; alpha 0.001, confirm 3: 8640e-9 = 8.6e-6 a day.
    const model = {
      windows: 360,
      settings: {
        null: 'uniform',
        alpha: 0.001,
        confirm: 3,
        clear: 5,
        maxFlagged: 10,
        minExcess: 0.2,
        minDispersion: 1.5,
        maxDetectable: 3,
        spread: 'auto',
        baselineWindows: 60,
        windowMs: 10_000,
        hopMs: 10_000,
        declaredUniverse: true,
      },
    } as unknown as ReviewModel;
    const paragraphs = methodParagraphs(model);
    expect(paragraphs.map((paragraph) => paragraph.heading)).toEqual([
      'Null model',
      'Tests and alpha',
      'Findings',
      'Windows and episodes',
      'Assumptions',
      'Cautions',
    ]);
    expect(paragraphs[3].text).toContain('by chance alone about 8.6e-6 false incidents a day');
    expect(paragraphs[3].text).toContain('Windows of 10 s, aligned');
    // 360 windows x alpha 0.001 = 0.36 flagged by chance.
    expect(paragraphs[5].text).toContain('about 0.36 would be flagged at alpha 0.001');
    expect(paragraphs[2].text).toContain('at least 1.20x its fair share (--min-excess 0.2)');
    expect(paragraphs[4].text).toContain('so silent shards count as empty');
  });
});
