import { HtmlRenderer, Parser } from 'commonmark';
import { describe, expect, it } from 'vitest';
import { markdownReport } from '../../src/review/markdown-report.js';
import { episodeColumns } from '../../src/review/report-text.js';
import { hostileId, literalReview } from './literal-review.js';

// Source of truth: the literal windows of literal-review.ts, worked out by hand (7,200
// requests; in the three hot windows 1,400 requests over 4 shards, a fair share of 350:
// 800 is 2.29x and 450 above it, 200 is 0.57x and 150 below it, so 1,350 and -450 over the
// episode); the p-values and chance levels are the judge's (tested in test/judge/) and only
// carried through here. Rendered by the CommonMark reference implementation
// (commonmark 0.31.2 on npm) to check structure and that the hostile id stays text.

const generatedAt = new Date('2026-02-02T00:00:00Z');
const report = markdownReport(literalReview(), generatedAt);
const lines = report.split('\n');
const escapedId = '\\<img src=x onerror=alert(1)>\\|\\*b\\*';

describe('markdownReport', () => {
  it('has the headings in order', () => {
    expect(lines.filter((line) => line.startsWith('#'))).toEqual([
      '# Post-incident review',
      '## Summary',
      '## Episodes',
      '## Method',
      '### Null model',
      '### Tests and alpha',
      '### Findings',
      '### Windows and episodes',
      '### Assumptions',
      '### Cautions',
      '## Notes',
    ]);
  });

  it('states the summary figures of the literal windows', () => {
    expect(lines).toContain('- **span**: 2026-02-01T00:00:00Z to 2026-02-01T00:01:00Z (1 min)');
    expect(lines).toContain('- **windows**: 6 of 10 s');
    expect(lines).toContain('- **requests**: 7,200');
    expect(lines).toContain('- **shards**: 4');
    expect(lines).toContain(
      '- **windows by finding**: hotspot 3, cold 3, uneven 0, chance 3, too little traffic 0; failover pattern 3',
    );
    const peak = lines.find((line) => line.startsWith('- **peak window**'));
    expect(peak).toMatch(
      /^- \*\*peak window\*\*: 2026-02-01T00:00:20Z to 2026-02-01T00:00:30Z, hotspot, cold; fullest .* at 2\.29x \(p = /,
    );
    expect(peak).toContain(`fullest ${escapedId} at`);
  });

  it('writes one table row per episode, each with every column, the id escaped', () => {
    const rows = lines.filter((line) => line.startsWith('| '));
    expect(rows[0]).toBe(`| ${episodeColumns.join(' | ')} |`);
    expect(rows[1]).toBe(`|${episodeColumns.map(() => ' --- ').join('|')}|`);
    const body = rows.slice(2);
    expect(body).toHaveLength(4);
    for (const row of body) expect(row.split(/(?<!\\)\|/)).toHaveLength(episodeColumns.length + 2);
    expect(body[3]).toMatch(
      new RegExp(
        `^\\| hotspot \\(failover pattern\\) \\| ${escapedId.replace(/[\\|*()]/g, (c) => `\\${c}`)} \\| 2026-02-01T00:00:20Z \\| 2026-02-01T00:00:50Z \\| 30 s \\| 3 \\| 2\\.29x \\| \\+1,350 \\| `,
      ),
    );
    expect(body[0]).toMatch(
      /^\| cold \(failover pattern\) \| s-1 \| 2026-02-01T00:00:20Z \| 2026-02-01T00:00:50Z \| 30 s \| 3 \| 0\.57x \| -450 \| /,
    );
  });

  it('renders the hostile id as text', () => {
    const html = new HtmlRenderer().render(new Parser().parse(report));
    expect(html).not.toMatch(/<img/i);
    // The escaped `*` stays a literal star: no emphasis opened by the id. (CommonMark has
    // no tables; GFM's rule that `\|` does not split a cell is checked on the rows above.)
    expect(html).toContain('&lt;img src=x onerror=alert(1)&gt;|*b*');
    expect(html).not.toContain('<em>b</em>');
    expect(report).not.toContain(hostileId);
  });

  it('ends with where the charts are and when it was made', () => {
    expect(lines.at(-2)).toBe(
      'The charts (fullest shard against the chance ceiling, heat strip, load spread at the peak, p-values, findings over time) are in the HTML report (--out). Made by shardwise review at 2026-02-02T00:00:00.000Z.',
    );
  });
});
