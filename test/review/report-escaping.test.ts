import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { HtmlRenderer, Parser } from 'commonmark';
import { describe, expect, it } from 'vitest';
import { episodeColumns, escapeHtml, escapeMarkdown } from '../../src/review/report-text.js';
import { countReports, hostileIds, runCli } from './cli-run.js';

const dir = mkdtempSync(join(tmpdir(), 'shardwise-escaping-'));

describe('untrusted shard ids in the report', () => {
  it('are inert in the HTML (text, attributes, SVG) and the Markdown', async () => {
    const input = join(dir, 'hostile.jsonl');
    writeFileSync(input, countReports(hostileIds, 12, { shard: hostileIds[0], from: 3, to: 8 }));
    const html = join(dir, 'hostile.html');
    const markdown = join(dir, 'hostile.md');
    const { code, err } = await runCli([
      'review',
      '--input',
      input,
      '--out',
      html,
      '--markdown',
      markdown,
    ]);
    expect(err).not.toMatch(/Error/);
    expect(code).toBe(0);
    const page = readFileSync(html, 'utf8');
    // The id was flagged, so it is written in the table, the heat strip and the captions.
    expect(page).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    expect(page).not.toMatch(/<script/i);
    expect(page).not.toMatch(/<img/i);
    // No tag gained an event-handler attribute: the quotes in the ids stayed inside values.
    expect(attributeNames(page).filter((name) => name.startsWith('on'))).toEqual([]);
    const md = readFileSync(markdown, 'utf8');
    expect(md).not.toMatch(/(?<!\\)<(script|img)/i);
    // Plain-text readable: a backslash before the `<` that could open a tag, nothing else.
    expect(md).toContain('\\<script>alert(1)\\</script>');
    // Rendered by the CommonMark reference implementation (commonmark 0.31.2 on npm), the
    // ids are text, not elements.
    const rendered = new HtmlRenderer().render(new Parser().parse(md));
    expect(rendered).not.toMatch(/<script|<img/i);
    expect(rendered).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    // Episode rows keep their column count: a | in an id is escaped.
    const rows = md.split('\n').filter((line) => line.startsWith('| hotspot'));
    expect(rows.length).toBeGreaterThan(0);
    for (const row of rows) expect(row.split(/(?<!\\)\|/).length).toBe(episodeColumns.length + 2);
  });
});

/** Every attribute name of every tag, read with the HTML tokenizer's quoting rules. */
function attributeNames(page: string): string[] {
  const names: string[] = [];
  for (const [tag] of page.matchAll(
    /<[a-zA-Z][^\s>/]*(?:\s+[^\s=>/]+(?:=(?:"[^"]*"|'[^']*'|[^\s>]*))?)*\s*\/?>/g,
  )) {
    const attributes = tag.replace(/^<[^\s>/]+/, '');
    // Each match consumes its value, so a search never starts inside a quoted value.
    for (const [, name] of attributes.matchAll(
      /\s+([^\s=>/]+)(?:=(?:"[^"]*"|'[^']*'|[^\s>]*))?/g,
    )) {
      names.push(name.toLowerCase());
    }
  }
  return names;
}

describe('escapers', () => {
  // Expected strings from the HTML standard's character references (common practice).
  it('escapeHtml turns the five specials into references', () => {
    expect(escapeHtml(`<a href="x" title='y'>&</a>`)).toBe(
      '&lt;a href=&quot;x&quot; title=&#39;y&#39;&gt;&amp;&lt;/a&gt;',
    );
  });

  it('escapeMarkdown keeps a table cell one cell on one line', () => {
    expect(escapeMarkdown('a|b\nc*d_')).toBe('a\\|b\\u000ac\\*d\\_');
  });

  it('escapeMarkdown leaves text that cannot open HTML as written', () => {
    // A < before a space, and quotes, are plain text in CommonMark 0.31.2 (section 6.6: a
    // tag opens with < and a letter, /, ! or ?); only openers are escaped (section 2.4).
    expect(escapeMarkdown(`< 1e-300, "uneven", cluster's`)).toBe(`< 1e-300, "uneven", cluster's`);
    expect(escapeMarkdown('<b> &amp; &#39;')).toBe('\\<b> \\&amp; \\&#39;');
    const rendered = new HtmlRenderer().render(new Parser().parse(escapeMarkdown('<b> &amp;')));
    expect(rendered).toBe('<p>&lt;b&gt; &amp;amp;</p>\n');
  });
});
