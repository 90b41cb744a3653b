import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { LoadBar } from '../../src/ui/load-bar.js';
import { plain, styled } from './frame-style.js';

// Expected frames worked by hand from the doc comment of LoadBar: cells 0..width-1, a
// fraction f lands on cell round(f * (width - 1)); ▒ up to the ceiling mark ┃, █ past it,
// ╎ at the floor where the load does not reach it.

describe('LoadBar', () => {
  it('a load past the ceiling: shaded up to the mark, solid red beyond it', () => {
    // width 11: ceiling 0.5 -> cell 5, load 0.9 -> cell 9, floor 0.2 -> cell 2 (covered).
    const bar = render(<LoadBar bar={{ load: 0.9, ceiling: 0.5, floor: 0.2 }} width={11} />);
    expect(plain(bar.lastFrame())).toBe('▒▒▒▒▒┃████');
    expect(styled(bar.lastFrame())).toBe(
      '{dim}▒▒▒▒▒{/intensity}{bold}┃{/intensity}{red}████{/colour}',
    );
    bar.unmount();
  });

  it('a load within chance: shaded to the load, the floor mark where the load stops short', () => {
    // width 11: ceiling 0.8 -> cell 8, load 0.3 -> cell 3, floor 0.5 -> cell 5.
    const bar = render(<LoadBar bar={{ load: 0.3, ceiling: 0.8, floor: 0.5 }} width={11} />);
    expect(plain(bar.lastFrame())).toBe('▒▒▒▒ ╎  ┃');
    expect(styled(bar.lastFrame())).toBe('{dim}▒▒▒▒ ╎  {/intensity}{bold}┃{/intensity}');
    bar.unmount();
  });

  it('without cold tests no floor mark; an empty shard still shows its first cell', () => {
    const bar = render(<LoadBar bar={{ load: 0, ceiling: 0.5, floor: null }} width={11} />);
    expect(plain(bar.lastFrame())).toBe('▒    ┃');
    bar.unmount();
  });

  it('a load past the scale stops at the last cell: the bar is never wider than asked', () => {
    const bar = render(<LoadBar bar={{ load: 3, ceiling: 0.25, floor: null }} width={9} />);
    // width 9: ceiling 0.25 -> cell 2, load clamped to cell 8.
    expect(plain(bar.lastFrame())).toBe('▒▒┃██████');
    bar.unmount();
  });

  it('a width under two still draws the mark', () => {
    const bar = render(<LoadBar bar={{ load: 0.4, ceiling: 1, floor: null }} width={0} />);
    // last cell 1: ceiling -> cell 1, load 0.4 -> cell 0.
    expect(plain(bar.lastFrame())).toBe('▒┃');
    bar.unmount();
  });
});
