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

  it('serves no endpoint with --no-metrics', async () => {
    const result = await run([...scenario, '--no-metrics']);
    expect(result.code).toBe(0);
    expect(result.err).not.toMatch(/metrics at/);
  });
});

async function until<T>(probe: () => T | null, timeoutMs = 10_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const value = probe();
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
