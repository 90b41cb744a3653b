import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { HistoryStrip } from '../../src/ui/history-strip.js';
import type { HistoryView } from '../../src/ui/view-model.js';
import { plain, styled } from './frame-style.js';

// Levels worked by hand from HistoryStrip: a level l is round(16 l) eighths of two cells,
// the lower cell filled first (0.5, the ceiling, fills it), the rest in the upper one.
const history: HistoryView = {
  span: '4 windows',
  slots: [
    { level: 0.25, symbol: '·', tone: 'chance', selected: false },
    { level: 0.5, symbol: '·', tone: 'chance', selected: false },
    { level: 0.75, symbol: '▲', tone: 'hotspot', selected: false },
    { level: 1, symbol: '▲', tone: 'hotspot', selected: true },
  ],
};

describe('HistoryStrip', () => {
  it('two rows of bars split at the ceiling, then the symbols; labels padded to their column', () => {
    const strip = render(<HistoryStrip history={history} width={40} labelWidth={11} />);
    expect(plain(strip.lastFrame())).toBe(
      'History · 4 windows\n' + 'past ceil    ▄█\n' + 'within     ▄███\n' + 'finding    ··▲▲',
    );
    expect(styled(strip.lastFrame())).toBe(
      '{bold}History{/intensity} · 4 windows\n' +
        '{dim}past ceil  {/intensity}{red}  ▄█{/colour}\n' +
        '{dim}within     {/intensity}▄███\n' +
        // Ink writes only the changes between neighbouring cells' styles.
        '{dim}finding    {/intensity}{green}··{red}▲{inverse}{underline}▲{/colour}{/underline}{/inverse}',
    );
    strip.unmount();
  });

  it('an empty level draws blank cells; one eighth draws the lowest sliver', () => {
    const strip = render(
      <HistoryStrip
        history={{
          span: '2 windows',
          slots: [
            { level: 0, symbol: '?', tone: 'thin', selected: false },
            { level: 1 / 16, symbol: '·', tone: 'chance', selected: false },
          ],
        }}
        width={40}
        labelWidth={11}
      />,
    );
    expect(plain(strip.lastFrame())).toBe(
      'History · 2 windows\n' + 'past ceil    \n' + 'within      ▁\n' + 'finding    ?·',
    );
    strip.unmount();
  });

  it('a label column narrower than a label cuts the label', () => {
    const strip = render(<HistoryStrip history={history} width={40} labelWidth={4} />);
    expect(plain(strip.lastFrame())).toBe(
      'History · 4 windows\n' + 'past  ▄█\n' + 'with▄███\n' + 'find··▲▲',
    );
    strip.unmount();
  });
});
