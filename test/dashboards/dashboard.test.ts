// The dashboard definition: well-formed, the panels issue 5 asks for, every expression
// valid PromQL for promtool and selecting only metrics the exporter defines.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { exportedMetricNames } from './exported-names.js';
import { metricNames } from './promql-names.js';
import { promtool } from './promtool.js';

const file = fileURLToPath(new URL('../../dashboards/shardwise-dashboard.json', import.meta.url));

interface Panel {
  readonly id: number;
  readonly type: string;
  readonly title: string;
  readonly description: string;
  readonly gridPos: { h: number; w: number; x: number; y: number };
  readonly targets: { refId: string; expr: string; legendFormat: string }[];
  readonly fieldConfig: { defaults: Record<string, unknown> };
}

const dashboard = JSON.parse(readFileSync(file, 'utf8')) as {
  title: string;
  uid: string;
  panels: Panel[];
};
const expressions = dashboard.panels.flatMap((panel) => panel.targets.map((t) => t.expr));
const scratch = mkdtempSync(join(tmpdir(), 'shardwise-dashboard-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

describe('dashboard definition', () => {
  it('has unique panel ids and query ids, and panels inside a 24-column grid', () => {
    expect(new Set(dashboard.panels.map((panel) => panel.id)).size).toBe(dashboard.panels.length);
    for (const panel of dashboard.panels) {
      expect(panel.gridPos.x + panel.gridPos.w).toBeLessThanOrEqual(24);
      expect(panel.description.length).toBeGreaterThan(20);
      const refIds = panel.targets.map((target) => target.refId);
      expect(new Set(refIds).size).toBe(refIds.length);
      expect(panel.targets.length).toBeGreaterThan(0);
    }
    expect(dashboard.title).toMatch(/^shardwise/);
  });

  it('shows the verdict timeline, fullest shard against the ceiling, log-scale p-values, spread, rejections, lag', () => {
    const uses = (metric: string) =>
      dashboard.panels.filter((panel) =>
        panel.targets.some((t) => metricNames(t.expr).includes(metric)),
      );
    expect(uses('shardwise_finding').map((panel) => panel.type)).toEqual(['state-timeline']);
    const loads = uses('shardwise_chance_ceiling_relative_load');
    expect(loads).toHaveLength(1);
    expect(metricNames(loads[0].targets.map((t) => t.expr).join(' + '))).toContain(
      'shardwise_fullest_shard_relative_load',
    );
    const pValues = uses('shardwise_window_p_value');
    expect(pValues).toHaveLength(1);
    expect(pValues[0].fieldConfig.defaults.custom).toMatchObject({
      scaleDistribution: { type: 'log', log: 10 },
    });
    expect(uses('shardwise_dispersion_index')).toHaveLength(1);
    expect(uses('shardwise_rejected_records_total')).toHaveLength(1);
    expect(uses('shardwise_source_lag_seconds')).toHaveLength(1);
  });

  it('selects only metrics the exporter defines', async () => {
    const exported = await exportedMetricNames();
    for (const expression of expressions) {
      const names = metricNames(expression);
      expect(names.length, expression).toBeGreaterThan(0);
      for (const name of names) expect(exported.has(name), `${name} in ${expression}`).toBe(true);
    }
  });

  it('writes only valid PromQL (each expression checked by promtool as a recording rule)', async () => {
    const rules = expressions.map((expr, index) => ({
      record: `shardwise_dashboard_check_${index}`,
      expr,
    }));
    // JSON is YAML: promtool reads it as a rule file.
    const path = join(scratch, 'dashboard-expressions.rules.yml');
    writeFileSync(path, JSON.stringify({ groups: [{ name: 'dashboard', rules }] }));
    const result = await promtool(['check', 'rules', path], scratch);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
    expect(result.stdout).toContain(`SUCCESS: ${expressions.length} rules found`);
  });
});
