import { EventEmitter } from 'node:events';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { loadTerminalScreen } from '../../src/ui/load-terminal-screen.js';
import { ScreenController } from '../../src/ui/screen-controller.js';
import { SourceMeter } from '../../src/ui/source-meter.js';
import type { openTerminalScreen as openTerminalScreenFunction } from '../../src/ui/terminal-screen.js';
import { context } from './judged-windows.js';
import { ManualScheduler } from './manual-scheduler.js';

// Terminal control sequences, from the xterm control sequences document (common practice):
// CSI ? 1049 h/l enters/leaves the alternate screen buffer, CSI H homes the cursor,
// CSI ? 25 l/h hides/shows the cursor, CSI ? 2026 h/l begins/ends a synchronized update.
const enterAlternate = '\u001b[?1049h\u001b[H';
const leaveAlternate = '\u001b[?1049l';
const hideCursor = '\u001b[?25l';
const showCursor = '\u001b[?25h';
const beginUpdate = '\u001b[?2026h';
const endUpdate = '\u001b[?2026l';

/** A terminal to draw on: what Ink needs of a tty WriteStream, and the writes kept. */
class FakeTerminal extends EventEmitter {
  readonly isTTY = true;
  columns = 80;
  rows = 24;
  readonly writes: string[] = [];
  write(text: string): boolean {
    this.writes.push(text);
    return true;
  }
}

/** A terminal to read keys from: what Ink needs of a tty ReadStream, raw mode recorded. */
class FakeKeys extends EventEmitter {
  readonly isTTY = true;
  readonly rawMode: boolean[] = [];
  private pending: string | null = null;
  setRawMode(on: boolean): this {
    this.rawMode.push(on);
    return this;
  }
  setEncoding(): this {
    return this;
  }
  resume(): this {
    return this;
  }
  pause(): this {
    return this;
  }
  ref(): this {
    return this;
  }
  unref(): this {
    return this;
  }
  read(): string | null {
    const text = this.pending;
    this.pending = null;
    return text;
  }
  press(text: string): void {
    this.pending = text;
    this.emit('readable');
  }
}

// The screen is loaded as `watch` loads it, with CI set as on a build machine (and in
// shells that carry a build job's variables): Ink, left to itself, would then draw nothing
// until it is unmounted. Measured on main before the loader: the first three tests failed
// whenever CI was set.
let openTerminalScreen: typeof openTerminalScreenFunction;
const ciBefore = process.env.CI;
beforeAll(async () => {
  process.env.CI = 'true';
  ({ openTerminalScreen } = await loadTerminalScreen());
  expect(process.env.CI).toBe('true');
});
afterAll(() => {
  if (ciBefore === undefined) delete process.env.CI;
  else process.env.CI = ciBefore;
});

/** Lets Ink's input handling and React's commit run. */
const settle = () => new Promise<void>((resolve) => setTimeout(resolve, 20));

function openOnFakes() {
  const scheduler = new ManualScheduler();
  const controller = new ScreenController({
    context,
    size: { columns: 80, rows: 24 },
    meter: new SourceMeter('connecting', () => scheduler.now()),
    shares: () => null,
    idAt: (index) => `s-${index}`,
    scheduler,
  });
  const terminal = new FakeTerminal();
  const keys = new FakeKeys();
  const screen = openTerminalScreen({
    stdout: terminal as unknown as NodeJS.WriteStream,
    keys: keys as unknown as NodeJS.ReadStream,
    controller,
  });
  return { scheduler, controller, terminal, keys, screen };
}

describe('openTerminalScreen', () => {
  it('enters the alternate screen first, hides the cursor and draws the whole frame in one update', async () => {
    const { terminal, keys, screen } = openOnFakes();
    await settle();
    expect(terminal.writes.slice(0, 3)).toEqual([enterAlternate, beginUpdate, hideCursor]);
    expect(terminal.writes[4]).toBe(endUpdate);
    const lines = terminal.writes[3].split('\n');
    // 23 lines drawn (one less than the terminal), each ended by a newline.
    expect(lines).toHaveLength(24);
    expect(lines[23]).toBe('');
    // The header has no room for the title beside the mode: the facts start at the edge.
    expect(lines[0]).toBe(
      'scenario demo (seed 1) · 10 s windows     ● LIVE · waiting for the first window',
    );
    expect(lines[1]).toBe('○ WAITING for the first window to close');
    expect(lines[22]).toBe('keys › p pause   ← → step windows   s sort by load   ? help   q quit');
    expect(keys.rawMode).toEqual([true]);
    await screen.close();
  });

  it('keys reach the controller: p pauses, and the next frame says so', async () => {
    const { scheduler, controller, terminal, keys, screen } = openOnFakes();
    await settle();
    keys.press('p');
    await settle();
    scheduler.advance(300);
    await settle();
    expect(controller.getSnapshot().header.mode).toBe('‖ PAUSED');
    // Ink redraws at most 10 times a second (maxFps): the frame follows within 100 ms.
    await vi.waitFor(() => {
      const last = terminal.writes.filter((text) => text.includes('keys ›')).at(-1) as string;
      expect(last).toContain('‖ PAUSED · waiting for the first window');
      expect(last).toContain('keys › p resume');
    });
    await screen.close();
  });

  it('a resize of the terminal reaches the controller as its new size', async () => {
    const { scheduler, controller, terminal, screen } = openOnFakes();
    await settle();
    terminal.columns = 120;
    terminal.rows = 40;
    terminal.emit('resize');
    scheduler.advance(300);
    // screenLayout draws one column and one line less than the terminal has.
    expect(controller.getSnapshot().layout.columns).toBe(119);
    expect(controller.getSnapshot().layout.lines).toBe(39);
    await screen.close();
  });

  it('close gives the terminal back: cursor shown, raw mode off, alternate screen left last, once', async () => {
    const { scheduler, controller, terminal, keys, screen } = openOnFakes();
    await settle();
    const first = screen.close();
    const second = screen.close();
    expect(second).toBe(first);
    await first;
    expect(terminal.writes.at(-1)).toBe(leaveAlternate);
    expect(terminal.writes.filter((text) => text === leaveAlternate)).toHaveLength(1);
    expect(terminal.writes.slice(-3, -1)).toEqual([showCursor, showCursor]);
    expect(keys.rawMode).toEqual([true, false]);
    // No listener left behind: a later resize reaches neither Ink nor the controller.
    expect(terminal.listenerCount('resize')).toBe(0);
    terminal.columns = 100;
    terminal.emit('resize');
    scheduler.advance(300);
    expect(controller.getSnapshot().layout.columns).toBe(79);
  });
});
