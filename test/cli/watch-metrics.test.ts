// watch's metrics options: validation at start-up (exit 2, one line naming the option),
// the bound address on stderr, the endpoint alive while watch runs and closed after.
import { request } from 'node:http';
import { createServer } from 'node:net';
import { PassThrough, Readable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';

async function run(args: string[]): Promise<{ code: number; out: string; err: string }> {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  stdout.on('data', (d) => (out += d));
  stderr.on('data', (d) => (err += d));
  const code = await main(args, { stdout, stderr, stdin: Readable.from(['']), env: {} });
  return { code, out, err };
}

const scenario = [
  'watch',
  '--scenario',
  'chance',
  '--pace',
  'fast',
  '--start',
  '2025-12-01T00:00:00Z',
  '--no-ui',
];

describe('watch --metrics-port / --metrics-host / --no-metrics', () => {
  it('rejects a bad port or host at start-up, naming the option and the value', async () => {
    expect(await run([...scenario, '--metrics-port', '70000'])).toMatchObject({
      code: 2,
      out: '',
      err: 'shardwise watch: --metrics-port: "70000" is not a port number from 0 to 65535 (0 picks any free port)\n',
    });
    expect(await run([...scenario, '--metrics-host', 'http://0.0.0.0'])).toMatchObject({
      code: 2,
      err: 'shardwise watch: --metrics-host: "http://0.0.0.0" is not an IP address or host name (no port, no scheme; e.g. 127.0.0.1, ::1 or 0.0.0.0)\n',
    });
    expect(await run([...scenario, '--no-metrics', '--metrics-port', '0'])).toMatchObject({
      code: 2,
      err: 'shardwise watch: --metrics-port: "0" cannot be combined with --no-metrics\n',
    });
  });

  it('fails with exit 2 when the port is taken, before any verdict', async () => {
    const holder = createServer();
    await new Promise<void>((resolve) => holder.listen(0, '127.0.0.1', resolve));
    const port = (holder.address() as { port: number }).port;
    try {
      const result = await run([...scenario, '--metrics-port', String(port)]);
      expect(result).toEqual({
        code: 2,
        out: '',
        err: `shardwise watch: --metrics-port: "${port}" is in use on 127.0.0.1 (choose another port, or 0 for any free one)\n`,
      });
    } finally {
      await new Promise((resolve) => holder.close(resolve));
    }
  });

  it('prints the bound address of port 0 and serves while it runs, then closes', async () => {
    const stdout = new PassThrough();
    const stderr = new PassThrough();
    let err = '';
    let lines = 0;
    stderr.on('data', (d) => (err += d));
    // A slow reader: watch waits for stdout to drain, and the scrape happens meanwhile.
    stdout.pause();
    // 60 one-second windows: about 90 kB of verdicts, more than the stream buffers.
    const running = main(
      [...scenario, '--duration', '60s', '--window', '1s', '--metrics-port', '0'],
      {
        stdout,
        stderr,
        stdin: Readable.from(['']),
        env: {},
      },
    );
    const address = await until(() => /metrics at (http:\/\/127\.0\.0\.1:\d+)\/metrics/.exec(err));
    expect(err.split('\n')[0]).toBe(
      `shardwise watch: metrics at ${address[1]}/metrics (also /healthz, /readyz)`,
    );
    const body = await get(`${address[1]}/metrics`);
    expect(body).toMatch(/^shardwise_judge_info\{null="map",spread="auto",alpha="0.001"/m);
    stdout.on('data', (chunk: Buffer) => (lines += chunk.toString().split('\n').length - 1));
    stdout.resume();
    expect(await running).toBe(0);
    expect(lines).toBe(60);
    await expect(get(`${address[1]}/healthz`)).rejects.toThrow(/ECONNREFUSED/);
  });

  it('keeps the series bounded while a flood of bogus shard ids comes through stdin', async () => {
    const stdin = new PassThrough();
    const stderr = new PassThrough();
    let err = '';
    stderr.on('data', (d) => (err += d));
    const running = main(['watch', '--input', '-', '--no-ui', '--metrics-port', '0'], {
      stdout: new PassThrough().resume(),
      stderr,
      stdin,
      env: {},
    });
    const address = await until(() => /metrics at (http:\/\/127\.0\.0\.1:\d+\/metrics)/.exec(err));
    const base = Date.UTC(2025, 11, 1);
    // Raw quotes, braces, newlines, backslashes, NUL: valid JSON once escaped, hostile in a label.
    const junk = ['"', '}', '\n', '\\', ' ', 'é', '{le="x"}', '\u0000'];
    /** Windows `from`..`to` of 10 s, 2000 never-seen ids each (20 of them hot), and garbage. */
    const flood = (from: number, to: number) => {
      const lines: string[] = [];
      for (let window = from; window <= to; window++) {
        for (let index = 0; index < 2000; index++) {
          const shard = `bogus${junk[index % junk.length]}${window}-${index}`;
          const count = index < 20 ? 500 : 1;
          lines.push(JSON.stringify({ ts: base + window * 10_000, shard, count }));
        }
        lines.push('not json at all', `{"ts":${base},"shard":"${'x'.repeat(300)}","count":1}`);
      }
      stdin.write(lines.join('\n') + '\n');
    };
    const scrapeUntil = async (windows: number) =>
      until(async () => {
        const text = await get(address[1]);
        const closed = /^shardwise_windows_closed_total (\d+)$/m.exec(text);
        return closed !== null && Number(closed[1]) >= windows ? text : null;
      });
    const ours = (text: string) => text.split('\n').filter((line) => line.startsWith('shardwise_'));
    flood(0, 9);
    // Windows 0..8 close once event time passes their end plus the 2 s lateness.
    const first = ours(await scrapeUntil(9));
    flood(10, 19);
    const second = ours(await scrapeUntil(19));
    const flagged = (lines: string[]) =>
      lines.filter((line) => line.startsWith('shardwise_flagged_shard_relative_load'));
    expect(flagged(first)).toHaveLength(10);
    expect(flagged(second)).toHaveLength(10);
    expect(second.length).toBe(first.length);
    expect(first.length).toBeLessThan(120);
    for (const line of flagged(second)) {
      expect(line).toMatch(/shard="bogus[A-Za-z0-9._:\/@-]*~[0-9a-f]{8}"/);
    }
    expect(second.join('\n')).toMatch(
      /^shardwise_rejected_records_total\{reason="not_json"\} 20$/m,
    );
    expect(second.join('\n')).toMatch(
      /^shardwise_rejected_records_total\{reason="shard_id_too_long"\} 20$/m,
    );
    stdin.end();
    expect(await running).toBe(0);
  });

  it('serves no endpoint with --no-metrics', async () => {
    const result = await run([...scenario, '--no-metrics']);
    expect(result.code).toBe(0);
    expect(result.err).not.toMatch(/metrics at/);
  });
});

async function until<T>(probe: () => T | null | Promise<T | null>, timeoutMs = 20_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const value = await probe();
    if (value !== null) return value;
    if (Date.now() > deadline) throw new Error('timed out');
    await new Promise((resolve) => setTimeout(resolve, 10));
  }
}

function get(url: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const call = request(url, { agent: false }, (response) => {
      let body = '';
      response.on('data', (chunk) => (body += chunk));
      response.on('end', () => resolve(body));
    });
    call.on('error', reject);
    call.end();
  });
}
