// Reads the YAML files in dashboards/ with the `yaml` package (YAML 1.2). The failsafe schema
// keeps every scalar a string, as the tests compare text; every error or warning the library
// reports fails the read, naming the file and the line, so a file promtool would read
// differently (or not at all) never passes here in silence.
import { parseDocument } from 'yaml';

export type YamlValue = string | YamlValue[] | { [key: string]: YamlValue };

export function readRuleYaml(source: string, name: string): YamlValue {
  const document = parseDocument(source, { schema: 'failsafe', uniqueKeys: true });
  const problems = [...document.errors, ...document.warnings];
  if (problems.length > 0) {
    const first = problems[0];
    const line = first.linePos?.[0].line;
    throw new Error(`${name}${line === undefined ? '' : `:${line}`}: ${first.message}`);
  }
  const value = document.toJS() as YamlValue | null;
  if (value === null) throw new Error(`${name}: empty document`);
  return value;
}
