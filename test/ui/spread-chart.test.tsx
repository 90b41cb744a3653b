import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { SpreadChart } from '../../src/ui/spread-chart.js';
import type { SpreadView } from '../../src/ui/view-model.js';
import { plain, styled } from './frame-style.js';

// Cells worked by hand from SpreadChart: over `height` rows a bin seen at fraction f fills
// round(8 f height) eighths bottom up (▁..█), its prediction round(4 f height) quarters in
// braille (⣀ ⣤ ⣶ ⣿); then one blank cell (cellsPerBin 3).
const spread: SpreadView = {
  title: 'Spread',
  legend: '█ seen ⣿ chance',
  bins: [
    // 16 eighths: full in both rows; predicted 4 quarters: the lower row.
    { observed: 1, expected: 0.5, tone: 'chance' },
    // 4 eighths in the lower row; predicted 6 quarters: full below, half above.
    { observed: 0.25, expected: 0.75, tone: 'chance' },
    // Rounds to nothing, yet a shard is there: the lowest sliver.
    { observed: 0.01, expected: 0, tone: 'hotspot' },
  ],
  axis: '0.5x   1x   1.5x',
  empty: null,
};

describe('SpreadChart', () => {
  // Ink drops the unstyled gap that ends a line; the styled blanks before it stay.
  it('per bin a solid column in its tone, a dotted prediction and a gap; the axis below', () => {
    const chart = render(<SpreadChart spread={spread} width={40} height={2} />);
    expect(plain(chart.lastFrame())).toBe(
      'Spread · █ seen ⣿ chance\n' + '█   ⣤   \n' + '█⣿ ▄⣿ ▁ \n' + '0.5x   1x   1.5x',
    );
    expect(styled(chart.lastFrame())).toBe(
      '{bold}Spread{/intensity} · █ seen ⣿ chance\n' +
        // Seen in the bin's tone (green: chance, red: hotspot), the prediction dim.
        '{green}█{/colour}{dim} {/intensity} {green} {/colour}{dim}⣤{/intensity} {red} {/colour}{dim} {/intensity}\n' +
        '{green}█{/colour}{dim}⣿{/intensity} {green}▄{/colour}{dim}⣿{/intensity} {red}▁{/colour}{dim} {/intensity}\n' +
        '{dim}0.5x   1x   1.5x{/intensity}',
    );
    chart.unmount();
  });

  it('nothing to draw: the title and the reason, the panel keeping its height', () => {
    const chart = render(
      <SpreadChart
        spread={{ ...spread, empty: 'no requests in this window' }}
        width={40}
        height={2}
      />,
    );
    expect(styled(chart.lastFrame())).toBe(
      '{bold}Spread{/intensity}\n{dim}no requests in this window{/intensity}\n\n',
    );
    chart.unmount();
  });
});
