import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { HeaderBar } from '../../src/ui/header-bar.js';
import type { HeaderView } from '../../src/ui/view-model.js';
import { plain, styled } from './frame-style.js';

const live: HeaderView = {
  title: 'shardwise',
  facts: 'scenario demo (seed 1) · 64 shards · 10 s windows · alpha 0.01',
  mode: '● LIVE',
  modeTone: 'chance',
  position: 'newest of 12',
};

describe('HeaderBar', () => {
  it('title bold and facts on the left, the mode and position against the right edge', () => {
    // 100 cells: 'shardwise · ' (12) + facts (62) = 74 on the left, the right part
    // '● LIVE · newest of 12' (21) ends at the edge, one cell at least between them.
    const bar = render(<HeaderBar header={live} width={100} />);
    expect(plain(bar.lastFrame())).toBe(
      'shardwise · scenario demo (seed 1) · 64 shards · 10 s windows · alpha 0.01' +
        ' '.repeat(5) +
        '● LIVE · newest of 12',
    );
    expect(styled(bar.lastFrame())).toBe(
      '{bold}shardwise · {/intensity}scenario demo (seed 1) · 64 shards · 10 s windows · alpha 0.01' +
        ' '.repeat(5) +
        '{bold}{green}● LIVE{/colour}{/intensity} · newest of 12',
    );
    bar.unmount();
  });

  it('paused in yellow; with no title the facts start at the edge', () => {
    const bar = render(
      <HeaderBar
        header={{
          title: '',
          facts: 'file counts.jsonl · 10 s win',
          mode: '‖ PAUSED',
          modeTone: 'uneven',
          position: 'window 3 of 9 · 6 newer',
        }}
        width={63}
      />,
    );
    // Right part 34 cells and the margin 1, so the facts get 28 and fill them exactly.
    expect(styled(bar.lastFrame())).toBe(
      'file counts.jsonl · 10 s win {bold}{yellow}‖ PAUSED{/colour}{/intensity} · window 3 of 9 · 6 newer',
    );
    bar.unmount();
  });

  it('when the left side does not fit it is cut with an ellipsis; the right side stays whole', () => {
    // 40 cells: the right part takes 21 and the margin 1, the left keeps 18, the last an ellipsis.
    const bar = render(<HeaderBar header={live} width={40} />);
    expect(plain(bar.lastFrame())).toBe('shardwise · scena… ● LIVE · newest of 12');
    bar.unmount();
  });
});
