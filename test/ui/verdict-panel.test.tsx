import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import type { VerdictView } from '../../src/ui/view-model.js';
import { VerdictPanel } from '../../src/ui/verdict-panel.js';
import { plain, styled } from './frame-style.js';

const hotspot: VerdictView = {
  tone: 'hotspot',
  symbol: '▲',
  headline: 'HOTSPOT on seat-17: hotter than random placement allows',
  windowText: '00:00:30–00:00:40',
  evidence: ['Fullest seat-17: 912 req, 1.43x fair share; chance ceiling 1.21x; p = 2.1e-9'],
  model: 'null map · spread chance · statistical evidence only',
};

describe('VerdictPanel', () => {
  it('headline left, window right, one line per evidence sentence, an empty one for a missing one, the model', () => {
    // 100 cells: the window text (17) and its margin (1) leave the headline 82; it takes 57.
    const panel = render(<VerdictPanel verdict={hotspot} width={100} evidenceLines={2} />);
    expect(plain(panel.lastFrame())).toBe(
      '▲ HOTSPOT on seat-17: hotter than random placement allows' +
        ' '.repeat(26) +
        '00:00:30–00:00:40\n' +
        'Fullest seat-17: 912 req, 1.43x fair share; chance ceiling 1.21x; p = 2.1e-9\n' +
        '\n' +
        'null map · spread chance · statistical evidence only',
    );
    expect(styled(panel.lastFrame())).toBe(
      '{bold}{red}▲ HOTSPOT on seat-17: hotter than random placement allows{/colour}{/intensity}' +
        ' '.repeat(26) +
        '00:00:30–00:00:40\n' +
        'Fullest seat-17: 912 req, 1.43x fair share; chance ceiling 1.21x; p = 2.1e-9\n' +
        '\n' +
        '{dim}null map · spread chance · statistical evidence only{/intensity}',
    );
    panel.unmount();
  });

  it('more sentences than lines: the first ones; long ones cut at the edge', () => {
    const panel = render(
      <VerdictPanel
        verdict={{
          tone: 'failover',
          symbol: '◆',
          headline: 'FAILOVER: seat-42 went cold, seat-43 took its traffic',
          windowText: '',
          evidence: [
            'Fullest seat-43: 1290 req, 2.02x fair share; chance ceiling 1.21x; p = 1e-40',
            'Emptiest seat-42: 0 req, 0.00x fair share; chance floor 0.81x; p < 1e-300',
          ],
          model: 'null map · spread chance',
        }}
        width={40}
        evidenceLines={1}
      />,
    );
    // 39 cells of text, the 40th the ellipsis.
    expect(styled(panel.lastFrame())).toBe(
      '{bold}{magenta}◆ FAILOVER: seat-42 went cold, seat-43 …{/colour}{/intensity}\n' +
        'Fullest seat-43: 1290 req, 2.02x fair s…\n' +
        '{dim}null map · spread chance{/intensity}',
    );
    panel.unmount();
  });
});
