// The YAML reader of the dashboard tests: the `yaml` package (YAML 1.2.2) with every scalar a
// string. It replaced a hand-written subset reader, which read a plain value holding ": " as
// text where YAML (and so promtool) refuses the file; the cases below say which ones the
// subset already caught.
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { readRuleYaml } from './rule-yaml.js';

const dashboards = fileURLToPath(new URL('../../dashboards/', import.meta.url));

const rule = (body: string): string =>
  ['groups:', '  - name: shardwise', '    rules:', '      - alert: ShardQuiet', body].join('\n') +
  '\n';

describe('readRuleYaml', () => {
  it('reads every YAML file in dashboards/', () => {
    const files = readdirSync(dashboards).filter((file) => file.endsWith('.yml'));
    expect(files.length).toBeGreaterThanOrEqual(4);
    for (const file of files) {
      const document = readRuleYaml(readFileSync(join(dashboards, file), 'utf8'), file);
      expect(Object.keys(document), file).toEqual(
        expect.arrayContaining([file.endsWith('.test.yml') ? 'tests' : 'groups']),
      );
    }
  });

  it('keeps scalars as text and reads block scalars as YAML 1.2.2 says (8.1.1.2, 8.1.3)', () => {
    const document = readRuleYaml(
      rule(
        [
          '        expr: up == 0',
          '        for: 10m',
          '        labels: { severity: "warning" }',
          '        annotations:',
          '          summary: |',
          '            line one',
          '            line two',
          '          description: >-',
          '            folded',
          '            into one',
        ].join('\n'),
      ),
      'sample',
    ) as { groups: { rules: Record<string, unknown>[] }[] };
    expect(document.groups[0].rules[0]).toEqual({
      alert: 'ShardQuiet',
      expr: 'up == 0',
      for: '10m',
      labels: { severity: 'warning' },
      annotations: { summary: 'line one\nline two\n', description: 'folded into one' },
    });
  });

  // The subset reader took this file and gave the summary "Shard quiet: check it"; YAML
  // forbids a mapping inside a plain value on one line (1.2.2, 7.3.3 ns-plain-safe and 8.2.2).
  it('rejects a plain value holding ": " (the subset read it as text)', () => {
    expect(() =>
      readRuleYaml(
        rule(
          '        expr: up == 0\n        annotations:\n          summary: Shard quiet: check it',
        ),
        'colon.rules.yml',
      ),
    ).toThrow(/^colon\.rules\.yml:7: /);
  });

  // The next three the subset caught as well; they stay pinned.
  it('rejects a duplicate key', () => {
    expect(() =>
      readRuleYaml(rule('        expr: up == 0\n        expr: up == 1'), 'twice.rules.yml'),
    ).toThrow(/^twice\.rules\.yml:6: .*unique/);
  });

  it('rejects a key indented deeper than its siblings', () => {
    expect(() =>
      readRuleYaml(rule('        expr: up == 0\n         for: 5m'), 'indent.rules.yml'),
    ).toThrow(/^indent\.rules\.yml:\d+: /);
  });

  it('rejects tab indentation', () => {
    expect(() => readRuleYaml(rule('        expr: up == 0\n\t\tfor: 5m'), 'tab.rules.yml')).toThrow(
      /^tab\.rules\.yml:\d+: /,
    );
  });

  it('rejects an empty file', () => {
    expect(() => readRuleYaml('# nothing\n', 'empty.yml')).toThrow('empty.yml: empty document');
  });
});
