import type { RenderedChart } from './report-charts.js';
import type { ReviewModel } from './review-model.js';
import {
  caution,
  causeLines,
  episodeCells,
  episodeColumns,
  escapeHtml,
  formatP,
  formatRelative,
  formatTime,
  methodParagraphs,
  summaryItems,
} from './report-text.js';

/**
 * The review as one self-contained HTML page: inline CSS and inline SVG charts, no script,
 * no external reference of any kind (a Content-Security-Policy of default-src 'none' makes
 * the browser refuse any that slipped in), readable offline and on paper (@media print).
 * Every piece of text from the data, shard ids above all, is escaped here; the SVG comes
 * from Vega, which escapes the data it writes.
 */
export function htmlReport(
  model: ReviewModel,
  charts: readonly RenderedChart[],
  generatedAt: Date,
): string {
  const h = escapeHtml;
  const summary = summaryItems(model)
    .map(([label, value]) => `<dt>${h(label)}</dt><dd>${h(value)}</dd>`)
    .join('\n');
  const episodes =
    model.episodes.length === 0
      ? '<p class="empty">No episode: no shard was flagged and no window-wide finding held.</p>'
      : `<div class="table-scroll"><table id="episode-table">
<thead><tr>${episodeColumns.map((column) => `<th scope="col">${h(column)}</th>`).join('')}</tr></thead>
<tbody>
${model.episodes
  .map(
    (episode) =>
      `<tr class="finding-${h(episode.finding.replace(/ /g, '-'))}" title="${h(`${episode.finding} on ${episode.shard ?? 'all shards'}`)}">${episodeCells(
        episode,
      )
        .map((cell, at) => `<td${cellClass(at, cell)}>${h(cell)}</td>`)
        .join('')}</tr>`,
  )
  .join('\n')}
</tbody>
</table></div>`;
  const causes = causeLines(model);
  const causeList =
    causes.length === 0
      ? ''
      : `<h3>What made the shards hot (from the keys)</h3>
<ul id="key-causes">
${causes.map((line) => `<li>${h(line)}</li>`).join('\n')}
</ul>`;
  const figures = charts
    .map(
      (chart) => `<figure id="chart-${h(chart.id)}" class="chart">
<h3>${h(chart.title)}</h3>
${chart.svg}
<figcaption>${h(chart.caption)}</figcaption>
</figure>`,
    )
    .join('\n');
  const peak = model.peak;
  const peakText =
    peak === null
      ? ''
      : `<p>Peak window ${h(formatTime(peak.start))} to ${h(formatTime(peak.end))}: ${h(
          peak.judgement.findings.join(', '),
        )}; fullest ${h(peak.judgement.fullest?.shard ?? 'n/a')} at ${h(
          formatRelative(peak.judgement.fullest?.relative ?? 0),
        )} (p = ${h(formatP(peak.judgement.fullest?.p ?? null))}), chance ceiling ${h(
          formatRelative(peak.judgement.ceiling.relative),
        )}.</p>`;
  const method = methodParagraphs(model)
    .map(({ heading, text }) => `<h3>${h(heading)}</h3>\n<p>${h(text)}</p>`)
    .join('\n');
  const notes =
    model.notes.length === 0
      ? ''
      : `<section id="notes"><h2>Notes</h2><ul>${model.notes.map((note) => `<li>${h(note)}</li>`).join('')}</ul></section>`;
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${h(`shardwise review: ${model.windows === 0 ? 'no windows' : `${formatTime(model.from)} to ${formatTime(model.to)}`}`)}</title>
<style>
body { font-family: sans-serif; margin: 2rem auto; max-width: 60rem; padding: 0 1rem; color: #111827; line-height: 1.45; }
h1 { font-size: 1.6rem; margin-bottom: 0.2rem; }
h2 { font-size: 1.25rem; border-bottom: 1px solid #d1d5db; padding-bottom: 0.2rem; margin-top: 2rem; }
h3 { font-size: 1.05rem; margin: 1.2rem 0 0.3rem; }
.caution { border-left: 4px solid #d97706; background: #fffbeb; padding: 0.6rem 0.8rem; }
dl.summary { display: grid; grid-template-columns: max-content 1fr; gap: 0.2rem 1rem; }
dl.summary dt { font-weight: bold; }
dl.summary dd { margin: 0; }
table { border-collapse: collapse; width: 100%; font-size: 0.85rem; }
th, td { border: 1px solid #d1d5db; padding: 0.25rem 0.4rem; text-align: left; vertical-align: top; }
th { background: #f3f4f6; }
td.shard { font-family: monospace; }
td.whole { white-space: nowrap; }
td.long-id { overflow-wrap: anywhere; min-width: 16ch; }
.table-scroll { overflow-x: auto; }
tr.finding-hotspot td:first-child { border-left: 4px solid #c2410c; }
tr.finding-cold td:first-child { border-left: 4px solid #1d4ed8; }
tr.finding-uneven td:first-child { border-left: 4px solid #7e22ce; }
tr.finding-too-little-traffic td:first-child { border-left: 4px solid #6b7280; }
figure.chart { margin: 1.5rem 0; }
figure.chart svg { max-width: 100%; height: auto; display: block; }
figcaption { font-size: 0.85rem; color: #374151; }
footer { margin-top: 2rem; font-size: 0.8rem; color: #6b7280; }
@media print {
  body { margin: 0; max-width: none; font-size: 10pt; }
  h2 { break-after: avoid; }
  figure.chart, tr { break-inside: avoid; }
  .caution { background: none; }
  @page { margin: 14mm; }
}
</style>
</head>
<body>
<header>
<h1>Post-incident review</h1>
<p class="caution">${h(caution)}</p>
</header>
<section id="summary">
<h2>Summary</h2>
<dl class="summary">
${summary}
</dl>
${peakText}
</section>
<section id="episodes">
<h2>Episodes</h2>
${episodes}
${causeList}
</section>
<section id="charts">
<h2>Charts</h2>
${figures}
</section>
<section id="method">
<h2>Method</h2>
${method}
</section>
${notes}
<footer>Made by shardwise review at ${h(generatedAt.toISOString())}.</footer>
</body>
</html>
`;
}

/** Longest shard id kept on one line in the episode table; longer ones may break anywhere. */
const LONGEST_WHOLE_ID = 40;

/**
 * The class of an episode-table cell: ids (up to {@link LONGEST_WHOLE_ID} characters),
 * times, durations, counts, loads and p-values never break across lines (the table
 * scrolls sideways instead); the finding and the cause are words and wrap.
 */
function cellClass(column: number, cell: string): string {
  const name = episodeColumns[column];
  if (name === 'shard') {
    return cell.length > LONGEST_WHOLE_ID ? ' class="shard long-id"' : ' class="shard whole"';
  }
  if (name === 'finding' || name === 'cause from keys') return '';
  return ' class="whole"';
}
