// Reads the part of YAML 1.2 the files in dashboards/ are written in: block mappings and
// sequences, plain, single- and double-quoted scalars, literal (|) and folded (>) block
// scalars with clip (default) or strip (-) chomping, empty flow collections ([] and {}),
// and comments. Anything else throws, naming the line, so a construct it does not know
// can never be read wrongly in silence; tests also compare the rule count with promtool's.
// Scalars stay strings: the tests compare text. On the four .yml files in dashboards/ its
// output was compared once, by hand, with PyYAML's BaseLoader (also all strings): equal.

export type YamlValue = string | YamlValue[] | { [key: string]: YamlValue };

interface Line {
  readonly number: number;
  readonly indent: number;
  readonly text: string;
}

export function parseYamlSubset(source: string): YamlValue {
  const raw = source.split('\n');
  const reader = new Reader(raw);
  const first = reader.peek();
  if (first === null) throw new Error('empty document');
  const value = reader.block(first.indent);
  const rest = reader.peek();
  if (rest !== null)
    throw new Error(`line ${rest.number}: unexpected ${JSON.stringify(rest.text)}`);
  return value;
}

const keyPattern =
  /^("(?:[^"\\]|\\.)*"|'(?:[^']|'')*'|[^\s#'"\-[{][^:#]*?|-[^\s:#][^:#]*?):(?:\s+(.*))?$/;

class Reader {
  private readonly raw: readonly string[];
  private index = 0;
  /** A line rewritten in place: the rest of a `- key: value` item, at its own indent. */
  private pending: Line | null = null;

  constructor(raw: readonly string[]) {
    this.raw = raw;
  }

  peek(): Line | null {
    if (this.pending !== null) return this.pending;
    while (this.index < this.raw.length) {
      const text = this.raw[this.index];
      const trimmed = text.trim();
      if (trimmed === '' || trimmed.startsWith('#')) {
        this.index++;
        continue;
      }
      if (/^\t/.test(text)) throw new Error(`line ${this.index + 1}: tab indentation`);
      return {
        number: this.index + 1,
        indent: text.length - text.trimStart().length,
        text: trimmed,
      };
    }
    return null;
  }

  private take(): Line {
    const line = this.peek() as Line;
    if (this.pending !== null) this.pending = null;
    else this.index++;
    return line;
  }

  block(indent: number): YamlValue {
    const line = this.peek();
    if (line === null || line.indent !== indent)
      throw new Error(`line ${line?.number}: bad indent`);
    return line.text === '-' || line.text.startsWith('- ')
      ? this.sequence(indent)
      : this.mapping(indent);
  }

  private sequence(indent: number): YamlValue[] {
    const items: YamlValue[] = [];
    for (let line = this.peek(); line !== null && line.indent === indent; line = this.peek()) {
      if (!(line.text === '-' || line.text.startsWith('- '))) break;
      this.take();
      const rest = line.text.slice(1).trimStart();
      if (rest === '') {
        const next = this.peek();
        if (next === null || next.indent <= indent)
          throw new Error(`line ${line.number}: empty item`);
        items.push(this.block(next.indent));
      } else if (keyPattern.test(rest)) {
        const itemIndent = indent + (line.text.length - rest.length);
        this.pending = { number: line.number, indent: itemIndent, text: rest };
        items.push(this.mapping(itemIndent));
      } else {
        items.push(this.scalar(rest, line, indent));
      }
    }
    return items;
  }

  private mapping(indent: number): { [key: string]: YamlValue } {
    const map: { [key: string]: YamlValue } = {};
    for (let line = this.peek(); line !== null && line.indent === indent; line = this.peek()) {
      if (line.text.startsWith('- ')) break;
      const match = keyPattern.exec(line.text);
      if (match === null) throw new Error(`line ${line.number}: not a key: ${line.text}`);
      this.take();
      const key = unquote(match[1].trim(), line);
      if (Object.hasOwn(map, key)) throw new Error(`line ${line.number}: duplicate key ${key}`);
      const rest = match[2] === undefined ? '' : stripComment(match[2]);
      if (rest === '') {
        const next = this.peek();
        if (next !== null && next.indent > indent) map[key] = this.block(next.indent);
        else if (next !== null && next.indent === indent && next.text.startsWith('- ')) {
          map[key] = this.sequence(indent);
        } else map[key] = '';
      } else {
        map[key] = this.scalar(rest, line, indent);
      }
    }
    return map;
  }

  private scalar(text: string, line: Line, parentIndent: number): YamlValue {
    if (text === '[]') return [];
    if (text === '{}') return {};
    const block = /^([|>])(-?)$/.exec(text);
    if (block !== null) return this.blockScalar(block[1] === '>', block[2] === '-', parentIndent);
    if (/^[[{&*!%@`]/.test(text)) throw new Error(`line ${line.number}: unsupported ${text}`);
    return unquote(text, line);
  }

  /** Reads raw lines deeper than the parent, as YAML's block scalars do. */
  private blockScalar(folded: boolean, strip: boolean, parentIndent: number): string {
    if (this.pending !== null) throw new Error('block scalar after a rewritten line');
    const body: string[] = [];
    let indent = -1;
    while (this.index < this.raw.length) {
      const text = this.raw[this.index];
      if (text.trim() === '') {
        body.push('');
        this.index++;
        continue;
      }
      const own = text.length - text.trimStart().length;
      if (own <= parentIndent) break;
      if (indent < 0) indent = own;
      if (own < indent) throw new Error(`line ${this.index + 1}: block scalar indent`);
      body.push(text.slice(indent));
      this.index++;
    }
    while (body.length > 0 && body[body.length - 1] === '') body.pop();
    let value: string;
    if (!folded) {
      value = body.join('\n');
    } else {
      value = '';
      for (let i = 0; i < body.length; i++) {
        const current = body[i];
        if (i === 0) value = current;
        else if (current === '') value += '\n';
        else if (body[i - 1] === '') value += current;
        // Lines indented more than the first keep their line breaks (YAML 1.2, 8.1.3).
        else if (/^\s/.test(current) || /^\s/.test(body[i - 1])) value += '\n' + current;
        else value += ' ' + current;
      }
    }
    return strip || body.length === 0 ? value : value + '\n';
  }
}

function stripComment(text: string): string {
  if (text.startsWith('"') || text.startsWith("'")) return text.trim();
  const at = text.search(/\s#/);
  return (at < 0 ? text : text.slice(0, at)).trim();
}

function unquote(text: string, line: Line): string {
  if (text.startsWith('"')) {
    if (!/^"(?:[^"\\]|\\.)*"$/.test(text)) throw new Error(`line ${line.number}: bad string`);
    return JSON.parse(text) as string;
  }
  if (text.startsWith("'")) {
    if (!/^'(?:[^']|'')*'$/.test(text)) throw new Error(`line ${line.number}: bad string`);
    return text.slice(1, -1).replace(/''/g, "'");
  }
  return text;
}
