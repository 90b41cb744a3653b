// The live screen in a real terminal: `npm start` in a detached tmux session of 100x30,
// read back with capture-pane. Ground truth of the demo scenario: seat-17 runs hot from
// 0:20 to 1:40 (src/scenario/built-in-scenarios.ts), so with 10 s windows the first
// hotspot verdict closes about 32 s after the start. The session runs on a tmux server of
// its own (-L), never the user's. No tmux is a failure, never a skip.
import { execFileSync, spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { displayWidth } from '../../src/ui/terminal-text.js';

const root = fileURLToPath(new URL('../..', import.meta.url));
const server = `shardwise-e2e-${process.pid}`;
const session = 'screen';

function tmux(...args: string[]): string {
  return execFileSync('tmux', ['-L', server, ...args], { encoding: 'utf8' });
}

function pane(target = session): string {
  return tmux('capture-pane', '-p', '-t', target);
}

/**
 * The lines of a capture that were cut: Ink's truncation mark `…` anywhere (the demo's shard
 * ids are short, so none is an abbreviated id), or text in the last column, which the screen
 * keeps free, so a line that reaches it ran into the edge (cut mid-word or not).
 */
function cutLines(text: string, columns: number): string[] {
  return text
    .split('\n')
    .filter((line) => line.includes('…') || displayWidth(line.trimEnd()) >= columns);
}

async function waitFor(
  what: string,
  check: (text: string) => boolean,
  seconds: number,
  { whileRunning = true } = {},
) {
  const deadline = Date.now() + seconds * 1000;
  let text = pane();
  while (!check(text)) {
    // A program that ended early (a busy metrics port, a crash) fails at once, with its words.
    if (whileRunning && /^EXIT:\d+/m.test(text)) {
      throw new Error(`npm start ended before the ${what}; the pane shows:\n${text}`);
    }
    if (Date.now() > deadline) {
      throw new Error(`no ${what} on the screen within ${seconds} s; the pane shows:\n${text}`);
    }
    await new Promise((resolve) => setTimeout(resolve, 250));
    text = pane();
  }
  return text;
}

/** The window span on the verdict line (second line of the screen). */
function verdictSpan(text: string): string {
  const match = /(\d\d:\d\d:\d\d)–(\d\d:\d\d:\d\d)\s*$/m.exec(text.split('\n')[1] ?? '');
  expect(match, `no window span on the verdict line:\n${text}`).not.toBeNull();
  return (match as RegExpExecArray)[0].trim();
}

beforeAll(() => {
  const version = spawnSync('tmux', ['-V'], { encoding: 'utf8' });
  if (version.status !== 0) {
    throw new Error(
      'The screen test needs tmux: run scripts/provision.sh (npm test does), or apt-get install tmux',
    );
  }
  // The screen test drives the built program, so build what is in the tree now.
  const build = spawnSync('npm', ['run', 'build'], { cwd: root, encoding: 'utf8' });
  if (build.status !== 0) throw new Error(`npm run build failed:\n${build.stdout}${build.stderr}`);
  tmux('new-session', '-d', '-s', session, '-x', '100', '-y', '30', 'bash --norc --noprofile');
}, 180_000);

afterAll(() => {
  spawnSync('tmux', ['-L', server, 'kill-server']);
});

describe('npm start in a terminal', () => {
  it('shows the hotspot verdict, pauses, steps, and quits with the terminal restored', async () => {
    // CI is set as on a build machine: Ink, left to itself, would then draw nothing live.
    tmux(
      'send-keys',
      '-t',
      session,
      `cd '${root}' && env CI=true npm start; echo EXIT:$?`,
      'Enter',
    );
    let text = await waitFor('hotspot verdict', (t) => t.includes('▲ HOTSPOT on seat-17'), 120);
    expect(text).toMatch(
      /Fullest seat-17: \d+ req, 1\.\d\dx fair share; chance ceiling 1\.\d\dx( \(\d+ req\))?; p = /,
    );
    expect(text).toContain('● LIVE');
    expect(text).toContain('Source ● reading');

    // Pause: the verdict on show stays while the next window is judged behind it.
    tmux('send-keys', '-t', session, 'p');
    text = await waitFor('pause', (t) => t.includes('‖ PAUSED'), 5);
    const pausedOn = verdictSpan(text);
    text = await waitFor('a window judged while paused', (t) => t.includes('1 newer'), 20);
    expect(verdictSpan(text)).toBe(pausedOn);

    // Step back one window and forward again.
    tmux('send-keys', '-t', session, 'Left');
    text = await waitFor('a step back', (t) => t.includes('2 newer'), 5);
    expect(verdictSpan(text)).not.toBe(pausedOn);
    tmux('send-keys', '-t', session, 'Right');
    text = await waitFor('a step forward', (t) => t.includes('1 newer'), 5);
    expect(verdictSpan(text)).toBe(pausedOn);

    // Resume, then quit.
    tmux('send-keys', '-t', session, 'p');
    await waitFor('resume', (t) => t.includes('● LIVE'), 5);
    tmux('send-keys', '-t', session, 'q');
    text = await waitFor('the exit code', (t) => /^EXIT:\d+/m.test(t), 20, { whileRunning: false });
    expect(text).toMatch(/^EXIT:0$/m);
    // Back on the shell's own screen: the summary, none of the screen.
    expect(text).toMatch(/^shardwise watch: \d+ windows judged/m);
    expect(text).not.toContain('Shards ·');
    expect(
      tmux('display-message', '-p', '-t', session, '#{alternate_on} #{cursor_flag}').trim(),
    ).toBe('0 1');
    // The terminal is out of raw mode: line editing and echo are on again.
    tmux(
      'send-keys',
      '-t',
      session,
      "stty -a | tr ' ;' '\\n\\n' | grep -xE -- '-?(icanon|echo)'; echo STTY:END",
      'Enter',
    );
    text = await waitFor('stty', (t) => /^STTY:END/m.test(t), 10, { whileRunning: false });
    const modes = text
      .slice(text.lastIndexOf('stty -a'))
      .split('\n')
      .map((line) => line.trim());
    expect(modes).toContain('icanon');
    expect(modes).toContain('echo');
    expect(modes).not.toContain('-icanon');
  });
});

describe('npm start at 80x24 and 120x40 (issue #18)', () => {
  it('cuts no line of the screen at either size, and the header keeps alpha', async () => {
    const sizes = [
      { name: 'small', columns: 80, rows: 24 },
      { name: 'large', columns: 120, rows: 40 },
    ];
    for (const size of sizes) {
      tmux(
        'new-session',
        '-d',
        '-s',
        size.name,
        '-x',
        String(size.columns),
        '-y',
        String(size.rows),
        `cd '${root}' && env CI=true npm start; echo EXIT:$?; sleep 60`,
      );
    }
    for (const size of sizes) {
      const waitIn = async (what: string, check: (text: string) => boolean) => {
        const deadline = Date.now() + 120_000;
        let text = pane(size.name);
        while (!check(text)) {
          if (/^EXIT:\d+/m.test(text)) throw new Error(`npm start ended:\n${text}`);
          if (Date.now() > deadline) throw new Error(`no ${what} at ${size.name}:\n${text}`);
          await new Promise((resolve) => setTimeout(resolve, 250));
          text = pane(size.name);
        }
        return text;
      };
      // The first verdict, then the hotspot (seat-17 from 0:20), then its help page.
      for (const [what, check] of [
        ['first verdict', (t: string) => /^(·|▲) (CHANCE|HOTSPOT)/m.test(t)],
        ['hotspot verdict', (t: string) => t.includes('▲ HOTSPOT on seat-17')],
      ] as const) {
        const text = await waitIn(what, check);
        expect(cutLines(text, size.columns), `${size.name}, ${what}:\n${text}`).toEqual([]);
        expect(text.split('\n')[0]).toMatch(/(alpha|α) 0\.001/);
        expect(text).toMatch(/req(uests)? \d+\/s/);
        expect(text).toMatch(/^keys › /m);
      }
      tmux('send-keys', '-t', size.name, '?');
      const help = await waitIn('help', (t) => t.includes('Help · ? or Esc closes it'));
      expect(cutLines(help, size.columns), `${size.name}, help:\n${help}`).toEqual([]);
      tmux('send-keys', '-t', size.name, 'q');
      await waitIn('exit', (t) => /^EXIT:0/m.test(t)).catch(() => undefined);
    }
  }, 300_000);
});
