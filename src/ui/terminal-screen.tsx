import { render } from 'ink';
import { LiveScreen } from './live-screen.js';
import type { ScreenController } from './screen-controller.js';

/** The terminal the screen takes over. */
export interface TerminalScreenOptions {
  /** A terminal (isTTY): the screen is drawn here. */
  readonly stdout: NodeJS.WriteStream;
  /** A terminal the keys are read from, in raw mode while the screen is up. */
  readonly keys: NodeJS.ReadStream;
  readonly controller: ScreenController;
}

/** The screen while it is up. */
export interface TerminalScreen {
  /** Takes the screen down and gives the terminal back as it was. Safe to call twice. */
  close(): Promise<void>;
}

// xterm's alternate screen buffer: the shell's screen comes back untouched on the way out.
const enterAlternateScreen = '\u001b[?1049h\u001b[H';
const leaveAlternateScreen = '\u001b[?1049l';

/**
 * Draws the controller's frames on the terminal until closed. The screen runs on the
 * alternate buffer so that quitting restores what was there; Ink hides the cursor and puts
 * the keys' terminal in raw mode, and undoes both when unmounted. Ink's own redraw limit is
 * set just above the controller's frame rate: the controller is what bounds it.
 */
export function openTerminalScreen(options: TerminalScreenOptions): TerminalScreen {
  const { stdout, keys, controller } = options;
  stdout.write(enterAlternateScreen);
  const onResize = () =>
    controller.resize({ columns: stdout.columns ?? 80, rows: stdout.rows ?? 24 });
  stdout.on('resize', onResize);
  const instance = render(<LiveScreen feed={controller} />, {
    stdout,
    stdin: keys,
    exitOnCtrlC: false,
    patchConsole: false,
    maxFps: 10,
  });
  let closing: Promise<void> | null = null;
  return {
    close() {
      closing ??= (async () => {
        controller.close();
        stdout.off('resize', onResize);
        // Asked for before unmounting: Ink settles only the exit promises that exist then.
        const exited = instance.waitUntilExit();
        instance.unmount();
        await exited;
        stdout.write(leaveAlternateScreen);
      })();
      return closing;
    },
  };
}
