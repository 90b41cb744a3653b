// Runs the CLI in-process with captured streams, for the review tests.
import { PassThrough, Readable } from 'node:stream';
import { main } from '../../src/cli/main.js';

export async function runCli(
  args: string[],
  stdinText = '',
): Promise<{ code: number; out: string; err: string }> {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  stdout.on('data', (d) => (out += d));
  stderr.on('data', (d) => (err += d));
  const code = await main(args, { stdout, stderr, stdin: Readable.from([stdinText]), env: {} });
  return { code, out, err };
}

/** Count reports, one per shard per 10 s window from `startMs`, with `hot` doubled in some windows. */
export function countReports(
  shards: readonly string[],
  windows: number,
  hot: { shard: string; from: number; to: number } | null,
  startMs = Date.parse('2025-12-01T00:00:00Z'),
): string {
  const lines: string[] = [];
  for (let w = 0; w < windows; w++) {
    for (const shard of shards) {
      const doubled = hot !== null && shard === hot.shard && w >= hot.from && w < hot.to;
      lines.push(JSON.stringify({ ts: startMs + w * 10_000, shard, count: doubled ? 2000 : 1000 }));
    }
  }
  return lines.join('\n') + '\n';
}

/** Shard ids from the wire, chosen to break HTML text, attributes, SVG and Markdown tables. */
export const hostileIds = [
  '<script>alert(1)</script>',
  '"><img src=x onerror=alert(2)>',
  "' onmouseover='alert(3)",
  'pipe|and`tick`',
  '[link](http://127.0.0.1/)',
  's-5',
  's-6',
  's-7',
];
