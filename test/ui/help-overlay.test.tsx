import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { HelpOverlay } from '../../src/ui/help-overlay.js';
import { helpView } from '../../src/ui/key-help-view.js';
import type { HelpView } from '../../src/ui/view-model.js';
import { plain, styled } from './frame-style.js';

const help: HelpView = {
  title: 'Help · any key closes',
  keys: [
    { key: 'q', action: 'quit' },
    { key: '← [', action: 'step back' },
  ],
  panels: [
    { name: 'Verdict', text: 'the finding for the window on show and why' },
    { name: 'Shards', text: 'the shards that matter' },
  ],
};

describe('HelpOverlay', () => {
  it('title, keys padded to the widest key plus two, panels wrapped to the width', () => {
    const overlay = render(<HelpOverlay help={help} width={30} height={7} />);
    expect(plain(overlay.lastFrame())).toBe(
      'Help · any key closes\n' +
        'q    quit\n' +
        '← [  step back\n' +
        'Verdict: the finding for the\n' +
        'window on show and why\n' +
        'Shards: the shards that matter\n',
    );
    expect(styled(overlay.lastFrame()).split('\n').slice(0, 3)).toEqual([
      '{bold}Help · any key closes{/intensity}',
      '{bold}q    {/intensity}quit',
      '{bold}← [  {/intensity}step back',
    ]);
    overlay.unmount();
  });

  it('cut at its height: what does not fit is not drawn', () => {
    const overlay = render(<HelpOverlay help={help} width={30} height={4} />);
    expect(plain(overlay.lastFrame())).toBe(
      'Help · any key closes\n' +
        'q    quit\n' +
        '← [  step back\n' +
        'Verdict: the finding for the',
    );
    overlay.unmount();
  });

  it('the program’s help on a short terminal: the first lines of the whole help, none drawn over another', () => {
    // 80x16: 15 lines drawn, the header and the key line around it leave the help 13.
    const help = helpView({
      sourceLabel: 'scenario demo (seed 1)',
      windowMs: 10_000,
      latenessMs: 2_000,
      confirm: 3,
      clear: 2,
      maxDetectable: 3,
    });
    const whole = render(<HelpOverlay help={help} width={79} height={40} />);
    const cut = render(<HelpOverlay help={help} width={79} height={13} />);
    const wholeLines = plain(whole.lastFrame()).split('\n');
    expect(wholeLines.filter((line) => line !== '').length).toBeGreaterThan(13);
    expect(plain(cut.lastFrame()).split('\n')).toEqual(wholeLines.slice(0, 13));
    whole.unmount();
    cut.unmount();
  });
});
