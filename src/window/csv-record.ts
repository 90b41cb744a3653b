/**
 * Splits one CSV line into fields (RFC 4180 quoting: `"a,b"` is one field and
 * `""` inside quotes is a literal quote). Unquoted fields lose surrounding
 * spaces and tabs, because hand-written shard maps and spreadsheet exports
 * often pad after commas; quoted fields are kept exactly. Returns null for a
 * malformed line (an unclosed quote, or text after a closing quote) so the
 * caller can reject it with its own reason. O(line length).
 *
 * @example splitCsvRecord('s-1, 2.5') // ['s-1', '2.5']
 * @example splitCsvRecord('"a,b",1') // ['a,b', '1']
 */
export function splitCsvRecord(line: string): string[] | null {
  const fields: string[] = [];
  let at = 0;
  const end = line.length;
  for (;;) {
    while (at < end && isBlank(line.charCodeAt(at))) at++;
    if (at < end && line.charCodeAt(at) === quote) {
      let text = '';
      let from = at + 1;
      for (;;) {
        const close = line.indexOf('"', from);
        if (close < 0) return null;
        text += line.slice(from, close);
        if (line.charCodeAt(close + 1) === quote) {
          text += '"';
          from = close + 2;
          continue;
        }
        at = close + 1;
        break;
      }
      while (at < end && isBlank(line.charCodeAt(at))) at++;
      fields.push(text);
      if (at === end) return fields;
      if (line.charCodeAt(at) !== comma) return null;
      at++;
      continue;
    }
    const next = line.indexOf(',', at);
    const stop = next < 0 ? end : next;
    let last = stop;
    while (last > at && isBlank(line.charCodeAt(last - 1))) last--;
    const field = line.slice(at, last);
    if (field.includes('"')) return null;
    fields.push(field);
    if (next < 0) return fields;
    at = next + 1;
  }
}

const quote = 0x22;
const comma = 0x2c;

function isBlank(code: number): boolean {
  return code === 0x20 || code === 0x09;
}
