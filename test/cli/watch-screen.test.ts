// watch with the live screen, through main() on a pretend terminal: the screen comes up
// on the alternate buffer, shows the verdicts, answers q, and gives the terminal back;
// without a terminal watch falls back to JSON Lines and says so. CI is set, as on a build
// machine: Ink left to itself would then draw nothing live (only the last frame, at exit),
// and watch loads it so that it draws.
import { PassThrough, Readable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';

const ciBefore = process.env.CI;
beforeAll(() => {
  process.env.CI = 'true';
});
afterAll(() => {
  if (ciBefore === undefined) delete process.env.CI;
  else process.env.CI = ciBefore;
});

/** A terminal of the given size: what Ink needs of standard output and input. */
function terminal(columns: number, rows: number) {
  const stdout = Object.assign(new PassThrough(), { isTTY: true, columns, rows });
  const stdin = Object.assign(new PassThrough(), {
    isTTY: true,
    setRawMode: () => stdin,
    ref: () => stdin,
    unref: () => stdin,
  });
  let written = '';
  stdout.on('data', (chunk) => (written += chunk));
  return { stdout, stdin, output: () => written };
}

const sgr = /\u001b\[[0-9;]*m/g;

async function until(check: () => boolean, what: string, timeoutMs = 60_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!check()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
}

describe('watch on a terminal', () => {
  it('runs the screen, keeps it up after the input ends, quits on q with the terminal restored', async () => {
    const term = terminal(100, 30);
    const stderr = new PassThrough();
    let err = '';
    stderr.on('data', (chunk) => (err += chunk));
    const began = Date.now();
    const exit = main(
      [
        'watch',
        '--scenario',
        'demo',
        '--pace',
        'fast',
        '--duration',
        '1m',
        '--start',
        '2025-12-01T00:00:00Z',
        '--no-metrics',
      ],
      { stdout: term.stdout, stderr, stdin: term.stdin, env: {} },
    );
    // Ground truth: the demo's hotspot on seat-17 holds from 0:20 past 1:00, so the last of
    // the six windows (00:00:50) is one.
    await until(() => term.output().replace(sgr, '').includes('■ ENDED'), 'the end of the input');
    const shown = term.output().replace(sgr, '');
    expect(shown).toContain('HOTSPOT on seat-17');
    expect(shown).toContain('newest of 6');
    const elapsedMs = Date.now() - began;
    term.stdin.write('q');
    expect(await exit).toBe(0);
    const output = term.output();
    // Alternate screen in, then out as the very last thing; the cursor shown again.
    expect(output.startsWith('\u001b[?1049h')).toBe(true);
    expect(output.endsWith('\u001b[?1049l')).toBe(true);
    expect(output).toContain('\u001b[?25h');
    // Frames are bounded: Ink wraps each in a synchronized-update pair on a terminal.
    const frames = output.split('\u001b[?2026l').length - 1;
    expect(frames).toBeGreaterThanOrEqual(2);
    expect(frames).toBeLessThanOrEqual(Math.ceil(elapsedMs / 250) + 4);
    // No JSON on the terminal; the summary goes to stderr after the screen is gone.
    expect(output).not.toContain('"findings"');
    expect(err).toMatch(/^shardwise watch: 6 windows judged/m);
  });

  it('falls back to JSON Lines when standard output is not a terminal, and says so', async () => {
    const stdout = new PassThrough();
    const stderr = new PassThrough();
    let out = '';
    let err = '';
    stdout.on('data', (chunk) => (out += chunk));
    stderr.on('data', (chunk) => (err += chunk));
    const code = await main(
      ['watch', '--scenario', 'chance', '--pace', 'fast', '--duration', '10s', '--no-metrics'],
      { stdout, stderr, stdin: Readable.from(['']), env: {} },
    );
    expect(code).toBe(0);
    expect(err.split('\n')[0]).toBe(
      'shardwise watch: standard output is not a terminal; printing verdicts as JSON Lines, as with --no-ui',
    );
    expect(
      out
        .trim()
        .split('\n')
        .map((line) => JSON.parse(line).findings),
    ).toHaveLength(1);
  });

  it('--no-ui prints JSON Lines on a terminal too, without a notice', async () => {
    const term = terminal(100, 30);
    const stderr = new PassThrough();
    let err = '';
    stderr.on('data', (chunk) => (err += chunk));
    const code = await main(
      [
        'watch',
        '--scenario',
        'chance',
        '--pace',
        'fast',
        '--duration',
        '10s',
        '--no-metrics',
        '--no-ui',
      ],
      { stdout: term.stdout, stderr, stdin: term.stdin, env: {} },
    );
    expect(code).toBe(0);
    expect(JSON.parse(term.output().trim()).findings).toEqual(['chance']);
    expect(err).not.toContain('JSON Lines');
  });
});
