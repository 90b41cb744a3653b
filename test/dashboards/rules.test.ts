// The rule files in dashboards/: valid for promtool, their promtool unit tests pass, every
// alert has a firing and a quiet case there, every expression uses only metrics the
// exporter defines, and every alert says what it means, that it is statistical evidence,
// and what to check first.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { exportedMetricNames } from './exported-names.js';
import { metricNames } from './promql-names.js';
import { promtool, requirePromtool } from './promtool.js';
import { readRuleYaml, type YamlValue } from './rule-yaml.js';

const dashboards = fileURLToPath(new URL('../../dashboards/', import.meta.url));
const ruleFiles = ['shardwise-recording.rules.yml', 'shardwise-alerts.rules.yml'];
const testFiles = ['shardwise-recording.test.yml', 'shardwise-alerts.test.yml'];

interface Rule {
  readonly record?: string;
  readonly alert?: string;
  readonly expr: string;
  readonly for?: string;
  readonly labels?: Record<string, string>;
  readonly annotations?: Record<string, string>;
}

function rulesOf(file: string): Rule[] {
  const document = readRuleYaml(readFileSync(join(dashboards, file), 'utf8'), file) as unknown as {
    groups: { name: string; rules: Rule[] }[];
  };
  return document.groups.flatMap((group) => group.rules);
}

const recordingRules = rulesOf('shardwise-recording.rules.yml');
const alertingRules = rulesOf('shardwise-alerts.rules.yml');

describe('rule files', () => {
  it('pass promtool check rules, with as many rules as this test reads', async () => {
    const result = await promtool(['check', 'rules', ...ruleFiles], dashboards);
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    expect(result.stdout).toContain(
      `Checking shardwise-recording.rules.yml\n  SUCCESS: ${recordingRules.length} rules found`,
    );
    expect(result.stdout).toContain(
      `Checking shardwise-alerts.rules.yml\n  SUCCESS: ${alertingRules.length} rules found`,
    );
  });

  it('pass their promtool unit tests', async () => {
    const result = await promtool(['test', 'rules', ...testFiles], dashboards);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
    expect(result.stdout.match(/SUCCESS/g)).toHaveLength(testFiles.length);
  });

  it('name the five alerts of issue 5, ours, and record under our prefix', () => {
    expect(alertingRules.map((rule) => rule.alert)).toEqual([
      'ShardwiseHotspotSustained',
      'ShardwiseShardCold',
      'ShardwiseLoadUneven',
      'ShardwiseTelemetryStalled',
      'ShardwiseRejectionsHigh',
    ]);
    for (const rule of recordingRules) expect(rule.record).toMatch(/^shardwise:[a-z0-9_:]+$/);
  });

  it('page per shard for hotspot and cold: one alert per open incident series, its shard in the labels', () => {
    // The count of open incidents names no shard; the per-incident series does, and its
    // number is bounded by --max-flagged (README, "Series stay bounded").
    for (const name of ['ShardwiseHotspotSustained', 'ShardwiseShardCold']) {
      const rule = alertingRules.find((candidate) => candidate.alert === name) as Rule;
      expect(metricNames(rule.expr)).toEqual(['shardwise_incident_open']);
      expect(rule.annotations?.summary).toContain('{{ $labels.shard }}');
      for (const metric of [
        'shardwise_flagged_shard_relative_load',
        'shardwise_flagged_shard_p_value',
        name === 'ShardwiseHotspotSustained'
          ? 'shardwise_chance_ceiling_relative_load'
          : 'shardwise_chance_floor_relative_load',
      ]) {
        expect(rule.annotations?.latest_window).toContain(`printf \`${metric}{%s}\``);
      }
    }
  });

  it('use only metric names the exporter defines (and recorded names)', async () => {
    const exported = await exportedMetricNames();
    const recorded = new Set(recordingRules.map((rule) => rule.record as string));
    for (const rule of [...recordingRules, ...alertingRules]) {
      const names = metricNames(rule.expr);
      expect(names.length, rule.expr).toBeGreaterThan(0);
      for (const name of names) {
        expect(exported.has(name) || recorded.has(name), `${name} in ${rule.expr}`).toBe(true);
      }
    }
  });

  it('give every alert a severity, a summary, what it means, that it is evidence, what to check', () => {
    for (const rule of alertingRules) {
      expect(rule.labels?.severity, rule.alert).toMatch(/^(info|warning|critical)$/);
      // The per-shard alerts also say what the latest window shows of their shard.
      const perShard =
        rule.alert === 'ShardwiseHotspotSustained' || rule.alert === 'ShardwiseShardCold';
      expect(Object.keys(rule.annotations ?? {}).sort()).toEqual([
        'check_first',
        'description',
        ...(perShard ? ['latest_window'] : []),
        'summary',
      ]);
      const annotations = rule.annotations as Record<string, string>;
      expect(annotations.description, rule.alert).toMatch(/[Ss]tatistical evidence/);
      expect(annotations.check_first.length).toBeGreaterThan(40);
      expect(rule.for, rule.alert).toMatch(/^\d+m$/);
    }
  });

  it('have a promtool case where each alert fires and one where it stays quiet', () => {
    const document = readRuleYaml(
      readFileSync(join(dashboards, 'shardwise-alerts.test.yml'), 'utf8'),
      'shardwise-alerts.test.yml',
    ) as { tests: { alert_rule_test: { alertname: string; exp_alerts: YamlValue[] }[] }[] };
    for (const rule of alertingRules) {
      const checks = document.tests
        .flatMap((test) => test.alert_rule_test)
        .filter((check) => check.alertname === rule.alert);
      expect(
        checks.some((check) => check.exp_alerts.length > 0),
        `${rule.alert} fires`,
      ).toBe(true);
      expect(
        checks.some((check) => check.exp_alerts.length === 0),
        `${rule.alert} stays quiet`,
      ).toBe(true);
    }
  });
});

describe('the promtool helper', () => {
  const empty = mkdtempSync(join(tmpdir(), 'shardwise-nopath-'));
  afterAll(() => rmSync(empty, { recursive: true, force: true }));

  it('fails loudly, naming the package, when promtool is missing', () => {
    const saved = process.env.PATH;
    process.env.PATH = empty;
    try {
      expect(() => requirePromtool()).toThrow(/apt-get install prometheus/);
    } finally {
      process.env.PATH = saved;
    }
  });

  it('reports a rule promtool rejects', async () => {
    const file = join(empty, 'bad.rules.yml');
    writeFileSync(
      file,
      JSON.stringify({ groups: [{ name: 'x', rules: [{ record: 'a:b', expr: 'rate(x[5m]' }] }] }),
    );
    const result = await promtool(['check', 'rules', file], empty);
    expect(result.code).toBe(1);
    expect(result.stdout + result.stderr).toMatch(/FAILED/);
  });
});
