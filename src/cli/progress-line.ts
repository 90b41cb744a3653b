import { terminalMessage } from '../window/visible-text.js';

/**
 * A one-line progress report on stderr for long reads, redrawn in place at most every
 * 250 ms, and only when stderr is a terminal: piped or logged, a command stays quiet.
 * The text may name an input, so its control characters are escaped.
 */
export class ProgressLine {
  private readonly stream: NodeJS.WritableStream & { isTTY?: boolean };
  private readonly enabled: boolean;
  private readonly clock: () => number;
  private last = Number.NEGATIVE_INFINITY;
  private shown = false;

  constructor(stream: NodeJS.WritableStream & { isTTY?: boolean }, clock: () => number = Date.now) {
    this.stream = stream;
    this.enabled = stream.isTTY === true;
    this.clock = clock;
  }

  /** Redraws the line with `text()` if the last redraw is old enough (text is built only then). */
  update(text: () => string): void {
    if (!this.enabled) return;
    const now = this.clock();
    if (now - this.last < 250) return;
    this.last = now;
    this.shown = true;
    this.stream.write(`\r\u001b[2K${terminalMessage(text())}`);
  }

  /** Clears the line (before the command's own output on stderr). */
  done(): void {
    if (!this.shown) return;
    this.shown = false;
    this.stream.write('\r\u001b[2K');
  }
}
