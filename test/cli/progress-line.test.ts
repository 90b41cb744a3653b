import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { ProgressLine } from '../../src/cli/progress-line.js';

function stream(isTTY: boolean) {
  const out = new PassThrough() as PassThrough & { isTTY?: boolean };
  out.isTTY = isTTY;
  let text = '';
  out.on('data', (d) => (text += d));
  return { out, text: () => text };
}

describe('ProgressLine', () => {
  it('redraws in place on a terminal, at most every 250 ms, and clears at the end', () => {
    const { out, text } = stream(true);
    let now = 0;
    const progress = new ProgressLine(out, () => now);
    progress.update(() => 'one');
    now = 100;
    progress.update(() => 'skipped');
    now = 300;
    progress.update(() => 'two');
    progress.done();
    // \r and ESC [2K (erase line) are the ECMA-48 controls a terminal redraws with (common practice).
    expect(text()).toBe('\r\u001b[2Kone\r\u001b[2Ktwo\r\u001b[2K');
  });

  it('writes nothing when stderr is not a terminal', () => {
    const { out, text } = stream(false);
    const progress = new ProgressLine(out, () => 1000);
    progress.update(() => 'one');
    progress.done();
    expect(text()).toBe('');
  });

  it('escapes the controls and bidi overrides of a name in the text (ECMA-48 OSC, UAX #9)', () => {
    const { out, text } = stream(true);
    const progress = new ProgressLine(out, () => 0);
    progress.update(() => 'reading t\u001b]0;x\u0007\u202e.jsonl');
    // Only the redraw's own \r ESC [2K remains raw.
    expect(text()).toBe('\r\u001b[2Kreading t\\x1b]0;x\\x07\\u{202e}.jsonl');
  });
});
