import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { docPath, regenerated } from '../../scripts/metrics-doc.js';
import { verdictMetricNames } from '../../src/exporter/verdict-metrics.js';

describe('docs/metrics.md', () => {
  it('lists every metric as the code defines it (regenerate: npx tsx scripts/metrics-doc.ts --write)', () => {
    const current = readFileSync(docPath, 'utf8');
    expect(current).toBe(regenerated(current));
  });

  it('names every verdict metric the exporter lists', () => {
    const current = readFileSync(docPath, 'utf8');
    for (const name of verdictMetricNames) expect(current).toContain(`| \`${name}\` |`);
  });
});
