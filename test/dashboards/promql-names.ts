// The metric names a PromQL expression selects, for checking that rules and dashboards use
// only metrics the exporter defines. A small lexer, not a parser: it drops strings, label
// matchers, ranges, numbers, grouping and offset clauses, then keeps every identifier not
// called as a function or aggregation and not a keyword. Validity of the expression
// itself is promtool's job (`promtool check rules`).

const keywords = new Set([
  'and',
  'or',
  'unless',
  'by',
  'without',
  'on',
  'ignoring',
  'group_left',
  'group_right',
  'bool',
  'offset',
  'inf',
  'nan',
]);

export function metricNames(expression: string): string[] {
  const stripped = expression
    .replace(/"(?:[^"\\]|\\.)*"|'(?:[^'\\]|\\.)*'|`[^`]*`/g, ' ')
    .replace(/\{[^}]*\}/g, ' ')
    .replace(/\[[^\]]*\]/g, ' ')
    .replace(/\b(?:by|without|on|ignoring|group_left|group_right)\s*\([^)]*\)/g, ' ')
    .replace(/\boffset\s+-?\w+/g, ' ')
    .replace(/(?<![\w:])(?:0x[0-9a-f]+|\d+(?:\.\d*)?(?:e[+-]?\d+)?|\.\d+(?:e[+-]?\d+)?)/gi, ' ');
  const names = new Set<string>();
  for (const match of stripped.matchAll(/[a-zA-Z_:][a-zA-Z0-9_:]*(\s*\()?/g)) {
    const name = match[0].replace(/\s*\($/, '');
    if (match[1] !== undefined || keywords.has(name.toLowerCase())) continue;
    names.add(name);
  }
  return [...names];
}
