import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { KeyLine } from '../../src/ui/key-line.js';
import { plain, styled } from './frame-style.js';

describe('KeyLine', () => {
  it('the label dim, each key bold cyan beside its action, three spaces between', () => {
    const line = render(
      <KeyLine
        keys={[
          { key: 'q', action: 'quit' },
          { key: 'p', action: 'pause' },
          { key: '?', action: 'help' },
        ]}
      />,
    );
    expect(plain(line.lastFrame())).toBe('keys › q quit   p pause   ? help');
    expect(styled(line.lastFrame())).toBe(
      '{dim}keys › {/intensity}' +
        '{bold}{cyan}q{/colour}{/intensity} quit   ' +
        '{bold}{cyan}p{/colour}{/intensity} pause   ' +
        '{bold}{cyan}?{/colour}{/intensity} help',
    );
    line.unmount();
  });

  it('no keys: the label alone, its trailing space kept', () => {
    const line = render(<KeyLine keys={[]} />);
    expect(plain(line.lastFrame())).toBe('keys › ');
    line.unmount();
  });

  it('a line longer than the terminal is cut with an ellipsis, not wrapped', () => {
    // ink-testing-library's terminal is 100 columns wide (its stdout.columns): 99 cells of
    // text, the 100th the ellipsis.
    const keys = Array.from({ length: 12 }, (_, index) => ({
      key: String.fromCharCode(97 + index),
      action: 'step',
    }));
    const line = render(<KeyLine keys={keys} />);
    const text = 'keys › ' + keys.map((hint) => `${hint.key} step`).join('   ');
    expect(text.length).toBeGreaterThan(100);
    expect(plain(line.lastFrame())).toBe(
      'keys › a step   b step   c step   d step   e step   f step   g step   h step   i step   j step   k …',
    );
    line.unmount();
  });
});
