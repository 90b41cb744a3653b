import { spawn, spawnSync } from 'node:child_process';
import { request } from 'node:http';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { beforeAll, describe, expect, it } from 'vitest';

// The built CLI judging a long fast replay must keep answering: /healthz and /metrics
// while it judges, and SIGTERM with a clean stop (exit 0, the summary says it was
// interrupted). Measured before the feed gave the event loop turns: no HTTP answer until
// the replay had ended.
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const cli = join(root, 'dist', 'cli', 'main.js');

beforeAll(() => {
  const built = spawnSync('npm', ['run', 'build'], { cwd: root, encoding: 'utf8' });
  if (built.status !== 0) throw new Error(`npm run build failed: ${built.stderr}`);
});

function get(url: string): Promise<{ status: number; body: string }> {
  return new Promise((resolve, reject) => {
    const call = request(url, { agent: false, timeout: 20_000 }, (response) => {
      let body = '';
      response.on('data', (chunk) => (body += chunk));
      response.on('end', () => resolve({ status: response.statusCode ?? 0, body }));
    });
    call.on('timeout', () => call.destroy(new Error(`no answer from ${url} in 20 s`)));
    call.on('error', reject);
    call.end();
  });
}

describe('watch stays responsive while it judges', () => {
  it('answers /healthz and /metrics during a fast replay and stops cleanly on SIGTERM', async () => {
    // Six hours of the chance drill in 1 s windows: far more judging than this test waits for.
    const child = spawn(
      'node',
      [
        cli,
        'watch',
        '--scenario',
        'chance',
        '--pace',
        'fast',
        '--start',
        '2025-12-01T00:00:00Z',
        '--duration',
        '6h',
        '--window',
        '1s',
        '--no-keys',
        '--no-ui',
        '--metrics-port',
        '0',
      ],
      { stdio: ['ignore', 'pipe', 'pipe'] },
    );
    let err = '';
    let verdicts = 0;
    child.stderr.on('data', (d) => (err += d));
    child.stdout.on('data', (d: Buffer) => (verdicts += d.toString().split('\n').length - 1));
    const exited = new Promise<number | null>((resolve) => child.on('exit', resolve));
    const deadline = Date.now() + 30_000;
    let address: RegExpExecArray | null = null;
    while (address === null && Date.now() < deadline) {
      await new Promise((resolve) => setTimeout(resolve, 50));
      address = /metrics at (http:\/\/127\.0\.0\.1:\d+)\/metrics/.exec(err);
    }
    expect(address, `no metrics address on stderr: ${err}`).not.toBeNull();
    // Judging is under way: wait for some verdicts, then ask.
    while (verdicts < 50 && Date.now() < deadline) {
      await new Promise((resolve) => setTimeout(resolve, 50));
    }
    expect(verdicts).toBeGreaterThanOrEqual(50);
    const health = await get(`${address![1]}/healthz`);
    expect(health).toEqual({ status: 200, body: 'ok\n' });
    const metrics = await get(`${address![1]}/metrics`);
    expect(metrics.body).toMatch(/^shardwise_windows_closed_total \d+$/m);
    child.kill('SIGTERM');
    expect(await exited).toBe(0);
    // Interrupted well before the six hours were judged.
    expect(verdicts).toBeLessThan(6 * 3600);
    expect(err).toMatch(/^shardwise watch: \d+ windows judged/m);
  });
});
