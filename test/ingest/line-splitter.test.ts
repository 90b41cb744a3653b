import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { LineSplitter } from '../../src/ingest/line-splitter.js';

const encoder = new TextEncoder();
const decoder = new TextDecoder('utf-8', { ignoreBOM: true });

function split(chunks: readonly string[], maxLineLength = 1 << 20): string[] {
  const out: string[] = [];
  const splitter = new LineSplitter(maxLineLength, {
    line: (bytes, start, end, lineNumber) =>
      out.push(`${lineNumber}:${decoder.decode(bytes.subarray(start, end))}`),
    tooLong: (lineNumber) => out.push(`${lineNumber}:TOO LONG`),
  });
  for (const chunk of chunks) splitter.push(encoder.encode(chunk));
  splitter.end();
  return out;
}

describe('LineSplitter', () => {
  it('splits on \\n, strips \\r, keeps blank lines and a last line without ending', () => {
    expect(split(['a\r\nb\n\nc'])).toEqual(['1:a', '2:b', '3:', '4:c']);
    expect(split(['a\n'])).toEqual(['1:a']);
    expect(split([''])).toEqual([]);
  });

  it('joins a line cut by chunk boundaries, at every cut point (property)', () => {
    // Reference: String.prototype.split on the whole text, with \r\n read as \n.
    fc.assert(
      fc.property(
        fc.array(fc.constantFrom('a', 'é', '€', '😀', '\n', '\r\n', ' ', '{'), { maxLength: 60 }),
        fc.array(fc.nat({ max: 80 }), { maxLength: 6 }),
        (pieces, cuts) => {
          const text = pieces.join('');
          const bytes = encoder.encode(text);
          const points = [...new Set(cuts.map((cut) => cut % (bytes.length + 1)))].sort(
            (a, b) => a - b,
          );
          const out: string[] = [];
          const splitter = new LineSplitter(1 << 20, {
            line: (chunk, start, end) => out.push(decoder.decode(chunk.subarray(start, end))),
            tooLong: () => out.push('TOO LONG'),
          });
          let from = 0;
          for (const point of [...points, bytes.length]) {
            splitter.push(bytes.subarray(from, point));
            from = point;
          }
          splitter.end();
          const expected = text
            .split('\n')
            .map((line) => (line.endsWith('\r') ? line.slice(0, -1) : line));
          if (expected[expected.length - 1] === '') expected.pop();
          expect(out).toEqual(expected);
        },
      ),
      { numRuns: 2000, seed: 99 },
    );
  });

  it('drops a byte-order mark at the start only', () => {
    expect(split(['\ufeffa\n\ufeffb'])).toEqual(['1:a', '2:\ufeffb']);
  });

  it('reports an overlong line once, even across chunks, and goes on with the next', () => {
    expect(split(['ok\n0123456789\nfine\n'], 5)).toEqual(['1:ok', '2:TOO LONG', '3:fine']);
    expect(split(['ok\n012', '345', '6789', '\nfine'], 5)).toEqual([
      '1:ok',
      '2:TOO LONG',
      '3:fine',
    ]);
    expect(split(['0123456789'], 5)).toEqual(['1:TOO LONG']);
    // Exactly at the cap is accepted, and a \r does not count toward it.
    expect(split(['12345\r\n', '123', '45\r\n'], 5)).toEqual(['1:12345', '2:12345']);
  });
});
