import { describe, expect, it } from 'vitest';
import { helpView, keyHints, keyLineLabel } from '../../src/ui/key-help-view.js';
import { screenLayout } from '../../src/ui/screen-layout.js';
import type { ScreenState } from '../../src/ui/view-common.js';

const context = {
  sourceLabel: 'scenario demo (seed 1)',
  windowMs: 10_000,
  latenessMs: 2_000,
  confirm: 3,
  clear: 5,
  maxDetectable: 3,
};

const state = (paused: boolean, sort: ScreenState['sort']) =>
  ({ paused, sort, context }) as unknown as ScreenState;

describe('keyHints', () => {
  it('every key at 80 columns; the s key names the next sort, p what it would do', () => {
    expect(keyHints(state(false, 'evidence'), screenLayout({ columns: 80, rows: 24 }))).toEqual([
      { key: 'p', action: 'pause' },
      { key: '← →', action: 'step windows' },
      { key: 's', action: 'sort by load' },
      { key: '?', action: 'help' },
      { key: 'q', action: 'quit' },
    ]);
    const paused = keyHints(state(true, 'shard'), screenLayout({ columns: 80, rows: 24 }));
    expect(paused[0]).toEqual({ key: 'p', action: 'resume' });
    expect(paused[2]).toEqual({ key: 's', action: 'sort by evidence' });
  });

  it('on a narrow line whole hints go, the ones before help first; help and quit stay', () => {
    // 39 cells: 'keys › p pause   ← → step windows   s sort by load   ? help   q quit' is 67.
    expect(keyHints(state(false, 'evidence'), screenLayout({ columns: 40, rows: 12 }))).toEqual([
      { key: 'p', action: 'pause' },
      { key: '?', action: 'help' },
      { key: 'q', action: 'quit' },
    ]);
    expect(keyLineLabel).toBe('keys › ');
  });
});

describe('helpView', () => {
  it('every key the screen answers to, and the run’s own --confirm and --clear in the text', () => {
    const help = helpView(context);
    expect(help.title).toBe('Help · ? or Esc closes it');
    expect(help.keys.map((hint) => hint.key)).toEqual([
      'p  space',
      '←  →  [  ]',
      's',
      '?  h',
      'q  Ctrl+C',
    ]);
    expect(help.panels.map((panel) => panel.name)).toEqual([
      'Verdict',
      'Shards',
      'Spread',
      'History',
      'Source',
    ]);
    expect(help.panels[0].text).toContain('it clears after 5 clean windows');
    expect(help.panels[1].text).toContain('streak (3 open an incident, ! open)');
  });
});
