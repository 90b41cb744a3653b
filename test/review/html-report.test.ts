import { describe, expect, it } from 'vitest';
import { htmlReport } from '../../src/review/html-report.js';
import { episodeColumns } from '../../src/review/report-text.js';
import { hostileId, literalReview } from './literal-review.js';

// Source of truth: the literal windows of literal-review.ts, worked out by hand (see
// markdown-report.test.ts); the HTML standard's character references for the five
// specials (common practice). The chart is a literal stand-in: the page carries its SVG as
// given and escapes its id, title and caption.

const generatedAt = new Date('2026-02-02T00:00:00Z');
const chart = {
  id: 'fullest"x',
  title: 'Fullest <shard>',
  caption: 'a & b',
  svg: '<svg xmlns="http://www.w3.org/2000/svg" width="1" height="1"></svg>',
};
const page = htmlReport(literalReview(), [chart], generatedAt);
const escapedId = '&lt;img src=x onerror=alert(1)&gt;|*b*';

describe('htmlReport', () => {
  it('is one page with a strict content policy and its sections in order', () => {
    expect(
      page.startsWith('<!doctype html>\n<html lang="en">\n<head>\n<meta charset="utf-8">'),
    ).toBe(true);
    expect(page).toContain(
      `<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">`,
    );
    expect(page).toContain(
      '<title>shardwise review: 2026-02-01T00:00:00Z to 2026-02-01T00:01:00Z</title>',
    );
    const sections = [...page.matchAll(/<section id="([a-z-]+)">/g)].map((match) => match[1]);
    expect(sections).toEqual(['summary', 'episodes', 'charts', 'method', 'notes']);
    expect(page).not.toMatch(/<script|<link|src="http|href="http/i);
    expect(
      page.endsWith(
        '<footer>Made by shardwise review at 2026-02-02T00:00:00.000Z.</footer>\n</body>\n</html>\n',
      ),
    ).toBe(true);
  });

  it('states the summary figures of the literal windows', () => {
    expect(page).toContain('<dt>windows</dt><dd>6 of 10 s</dd>');
    expect(page).toContain('<dt>requests</dt><dd>7,200</dd>');
    expect(page).toContain('<dt>shards</dt><dd>4</dd>');
    expect(page).toMatch(
      /<p>Peak window 2026-02-01T00:00:20Z to 2026-02-01T00:00:30Z: hotspot, cold; fullest &lt;img src=x onerror=alert\(1\)&gt;\|\*b\* at 2\.29x \(p = /,
    );
  });

  it('writes one row per episode with every column, the hostile id escaped in cell and title', () => {
    const rows = [...page.matchAll(/<tr class="finding-([a-z-]+)" title="([^"]*)">(.*?)<\/tr>/g)];
    expect(rows.map((row) => [row[1], row[2]])).toEqual([
      ['cold', 'cold on s-1'],
      ['cold', 'cold on s-2'],
      ['cold', 'cold on s-3'],
      ['hotspot', `hotspot on ${escapedId}`],
    ]);
    for (const row of rows) {
      expect(row[3].match(/<td[ >]/g)).toHaveLength(episodeColumns.length);
    }
    expect(rows[3][3]).toContain(`<td class="shard whole">${escapedId}</td>`);
    expect(rows[3][3]).toContain('<td class="whole">+1,350</td>');
    expect(rows[0][3]).toContain('<td class="whole">-450</td>');
    expect(page).not.toContain(hostileId);
    expect(page).not.toMatch(/<img/i);
  });

  it('carries the chart SVG as given and escapes its words', () => {
    expect(page).toContain(`<figure id="chart-fullest&quot;x" class="chart">
<h3>Fullest &lt;shard&gt;</h3>
<svg xmlns="http://www.w3.org/2000/svg" width="1" height="1"></svg>
<figcaption>a &amp; b</figcaption>
</figure>`);
  });
});
