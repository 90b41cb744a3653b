import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { SourceLine } from '../../src/ui/source-line.js';
import { plain, styled } from './frame-style.js';

describe('SourceLine', () => {
  // Ink writes adjacent cells of the same style as one run: the bold label and the bold
  // state share one {bold} ... {/intensity}.
  it('reading: label bold, symbol and state bold green, then the facts', () => {
    const line = render(
      <SourceLine
        source={{
          symbol: '●',
          state: 'reading',
          tone: 'chance',
          facts: 'requests 6400/s · lag 1.2 s · last record 0.3 s ago · rejected 0 · late 0',
        }}
      />,
    );
    expect(plain(line.lastFrame())).toBe(
      'Source ● reading · requests 6400/s · lag 1.2 s · last record 0.3 s ago · rejected 0 · late 0',
    );
    expect(styled(line.lastFrame())).toBe(
      '{bold}Source {green}● reading{/colour}{/intensity}' +
        ' · requests 6400/s · lag 1.2 s · last record 0.3 s ago · rejected 0 · late 0',
    );
    line.unmount();
  });

  it('disconnected in red, ended in gray: the tone follows the state', () => {
    const lost = render(
      <SourceLine
        source={{ symbol: '✕', state: 'disconnected', tone: 'hotspot', facts: 'requests -/s' }}
      />,
    );
    expect(styled(lost.lastFrame())).toBe(
      '{bold}Source {red}✕ disconnected{/colour}{/intensity} · requests -/s',
    );
    lost.unmount();
    const ended = render(
      <SourceLine source={{ symbol: '■', state: 'ended', tone: 'muted', facts: 'lag -' }} />,
    );
    expect(styled(ended.lastFrame())).toBe(
      '{bold}Source {gray}■ ended{/colour}{/intensity} · lag -',
    );
    ended.unmount();
  });
});
