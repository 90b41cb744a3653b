// The dashboard definition: well-formed against the dashboard JSON model it follows, the
// panels issue 5 asks for, every expression valid PromQL for promtool, scoped to the
// chosen instances and selecting only metrics the exporter defines.
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

// The model checked against: Grafana's classic dashboard JSON model at schemaVersion 39
// (Grafana 10.4 to 11.0; the fields as the "Dashboard JSON model" page of the Grafana
// documentation lists them for the classic model, the version numbers from memory): a
// dashboard object with uid, title, tags, time, templating.list and panels; each panel
// with an integer id, a type, a title, gridPos {h, w, x, y} on a grid 24 columns wide, a
// datasource reference {type, uid}, targets with refId, and fieldConfig {defaults,
// overrides}; a Prometheus target with expr and, for a table of label columns, format
// "table" and instant true; template variables with name and type, a query variable with
// a datasource reference, a query and a refresh of 0, 1 or 2.
describe('dashboard JSON model (classic, schemaVersion 39)', () => {
  const model = JSON.parse(readFileSync(file, 'utf8')) as Record<string, unknown>;
  const panels = model.panels as Record<string, unknown>[];
  const variables = (model.templating as { list: Record<string, unknown>[] }).list;
  const datasourceRef = { type: 'prometheus', uid: '${datasource}' };
  const coreTypes = ['timeseries', 'state-timeline', 'table', 'stat', 'gauge', 'bargauge', 'text'];

  it('has the dashboard fields of the model', () => {
    expect(model.schemaVersion).toBe(39);
    expect(typeof model.uid).toBe('string');
    // Dashboard uids are at most 40 characters (from memory: Grafana's uid limit).
    expect((model.uid as string).length).toBeLessThanOrEqual(40);
    expect(typeof model.title).toBe('string');
    expect(Array.isArray(model.tags)).toBe(true);
    expect(model.time).toEqual({ from: expect.any(String), to: expect.any(String) });
    expect(typeof model.editable).toBe('boolean');
    expect(Array.isArray(panels)).toBe(true);
    expect(Array.isArray(variables)).toBe(true);
  });

  it('gives every panel the fields of the model, on a 24-column grid without overlaps', () => {
    const cells = new Set<string>();
    for (const panel of panels) {
      const where = String(panel.title);
      expect(Number.isInteger(panel.id), where).toBe(true);
      expect(coreTypes, where).toContain(panel.type);
      expect(panel.datasource, where).toEqual(datasourceRef);
      const grid = panel.gridPos as Record<string, number>;
      expect(Object.keys(grid).sort(), where).toEqual(['h', 'w', 'x', 'y']);
      for (const value of Object.values(grid)) expect(Number.isInteger(value), where).toBe(true);
      expect(grid.x, where).toBeGreaterThanOrEqual(0);
      expect(grid.y, where).toBeGreaterThanOrEqual(0);
      expect(grid.w, where).toBeGreaterThanOrEqual(1);
      expect(grid.h, where).toBeGreaterThanOrEqual(1);
      expect(grid.x + grid.w, where).toBeLessThanOrEqual(24);
      for (let x = grid.x; x < grid.x + grid.w; x++) {
        for (let y = grid.y; y < grid.y + grid.h; y++) {
          expect(cells.has(`${x},${y}`), `${where} overlaps at ${x},${y}`).toBe(false);
          cells.add(`${x},${y}`);
        }
      }
      const fieldConfig = panel.fieldConfig as Record<string, unknown>;
      expect(typeof fieldConfig.defaults, where).toBe('object');
      expect(Array.isArray(fieldConfig.overrides), where).toBe(true);
      const targets = panel.targets as Record<string, unknown>[];
      for (const target of targets) {
        expect(target.refId, where).toMatch(/^[A-Z]$/);
        expect(typeof target.expr, where).toBe('string');
        expect(target.datasource, where).toEqual(datasourceRef);
      }
    }
  });

  it('has a datasource variable and an instance variable the expressions all use', () => {
    expect(variables.map((variable) => [variable.name, variable.type])).toEqual([
      ['datasource', 'datasource'],
      ['instance', 'query'],
    ]);
    expect(variables[0].query).toBe('prometheus');
    const instance = variables[1];
    expect(instance.datasource).toEqual(datasourceRef);
    expect([0, 1, 2]).toContain(instance.refresh);
    const query = instance.query as { query: string; refId: string };
    expect(query.query).toBe('label_values(shardwise_judge_info, instance)');
    expect(instance).toMatchObject({ multi: true, includeAll: true });
    // Every selector of every expression keeps to the chosen instances.
    for (const expression of expressions) {
      const selectors = [...expression.matchAll(/\b(shardwise_[a-z_:]+)(\{[^}]*\})?/g)];
      expect([...new Set(selectors.map((selector) => selector[1]))].sort(), expression).toEqual(
        [...metricNames(expression)].sort(),
      );
      for (const selector of selectors) {
        expect(selector[2] ?? '', expression).toContain('instance=~"$instance"');
      }
    }
  });

  it('shows the settings as one row of label columns per instance (instant table queries)', () => {
    const table = panels.find((panel) => panel.title === 'Settings in use') as Record<
      string,
      unknown
    >;
    expect(table.type).toBe('table');
    const targets = table.targets as Record<string, unknown>[];
    expect(metricNames((targets[0].expr as string) ?? '')).toEqual(['shardwise_judge_info']);
    for (const target of targets) {
      expect(target).toMatchObject({ format: 'table', instant: true, range: false });
    }
    // The two queries joined on their common labels, the value columns of the info
    // metric (always 1) and the time hidden: what is left are its labels.
    const transformations = table.transformations as { id: string; options: unknown }[];
    expect(transformations.map((step) => step.id)).toEqual(['merge', 'organize']);
    const organize = transformations[1].options as { excludeByName: Record<string, boolean> };
    expect(organize.excludeByName).toMatchObject({ Time: true, 'Value #A': true });
  });

  it('lists open incidents by shard as an instant table', () => {
    const table = panels.find((panel) =>
      (panel.targets as { expr: string }[]).some((target) =>
        metricNames(target.expr).includes('shardwise_incident_open'),
      ),
    ) as Record<string, unknown>;
    expect(table.type).toBe('table');
    for (const target of table.targets as Record<string, unknown>[]) {
      expect(target).toMatchObject({ format: 'table', instant: true });
    }
  });
});
