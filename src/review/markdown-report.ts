import type { ReviewModel } from './review-model.js';
import {
  caution,
  causeLines,
  episodeCells,
  episodeColumns,
  escapeMarkdown,
  formatP,
  formatRelative,
  formatTime,
  methodParagraphs,
  summaryItems,
} from './report-text.js';

/**
 * The review as a Markdown summary: the same summary, episodes and method as the HTML
 * report, without the charts (which the HTML report carries). Every piece of text from the
 * data is escaped, so a shard id can neither open HTML nor break a table.
 */
export function markdownReport(model: ReviewModel, generatedAt: Date): string {
  const m = escapeMarkdown;
  const lines: string[] = ['# Post-incident review', '', `> ${m(caution)}`, '', '## Summary', ''];
  for (const [label, value] of summaryItems(model)) lines.push(`- **${m(label)}**: ${m(value)}`);
  const peak = model.peak;
  if (peak !== null) {
    const j = peak.judgement;
    lines.push(
      `- **peak window**: ${m(formatTime(peak.start))} to ${m(formatTime(peak.end))}, ${m(j.findings.join(', '))}; fullest ${m(j.fullest?.shard ?? 'n/a')} at ${m(formatRelative(j.fullest?.relative ?? 0))} (p = ${m(formatP(j.fullest?.p ?? null))}), chance ceiling ${m(formatRelative(j.ceiling.relative))}`,
    );
  }
  lines.push('', '## Episodes', '');
  if (model.episodes.length === 0) {
    lines.push('No episode: no shard was flagged and no window-wide finding held.');
  } else {
    lines.push(`| ${episodeColumns.map(m).join(' | ')} |`);
    lines.push(`|${episodeColumns.map(() => ' --- ').join('|')}|`);
    for (const episode of model.episodes) {
      lines.push(`| ${episodeCells(episode).map(m).join(' | ')} |`);
    }
  }
  const causes = causeLines(model);
  if (causes.length > 0) {
    lines.push('', '## What made the shards hot (from the keys)', '');
    for (const line of causes) lines.push(`- ${m(line)}`);
  }
  lines.push('', '## Method', '');
  for (const { heading, text } of methodParagraphs(model)) {
    lines.push(`### ${m(heading)}`, '', m(text), '');
  }
  if (model.notes.length > 0) {
    lines.push('## Notes', '');
    for (const note of model.notes) lines.push(`- ${m(note)}`);
    lines.push('');
  }
  lines.push(
    `The charts (fullest shard against the chance ceiling, heat strip, load spread at the peak, p-values, findings over time) are in the HTML report (--out). Made by shardwise review at ${m(generatedAt.toISOString())}.`,
    '',
  );
  return lines.join('\n');
}
