import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { IncidentLine } from '../../src/ui/incident-line.js';
import { plain, styled } from './frame-style.js';

describe('IncidentLine', () => {
  // Ink writes adjacent cells of the same style as one run, so 'Incidents ' and a bold
  // symbol share one {bold} ... {/intensity}.
  it('none open: the word dim, then the false-incident rate dim', () => {
    const line = render(
      <IncidentLine
        incidents={{
          items: [],
          none: 'none open',
          falseRate: 'by chance about 0.02 false incidents a day (approx.)',
          more: '',
        }}
      />,
    );
    expect(plain(line.lastFrame())).toBe(
      'Incidents none open · by chance about 0.02 false incidents a day (approx.)',
    );
    expect(styled(line.lastFrame())).toBe(
      '{bold}Incidents {/intensity}{dim}none open' +
        ' · by chance about 0.02 false incidents a day (approx.){/intensity}',
    );
    line.unmount();
  });

  it('open incidents: each symbol bold in its tone, separated by dots, then how many more', () => {
    const line = render(
      <IncidentLine
        incidents={{
          items: [
            { symbol: '▲', tone: 'hotspot', text: 'seat-17 since 00:00:20' },
            { symbol: '▼', tone: 'cold', text: 'seat-42 since 00:01:00' },
          ],
          none: null,
          falseRate: '',
          more: '+1 more',
        }}
      />,
    );
    expect(plain(line.lastFrame())).toBe(
      'Incidents ▲ seat-17 since 00:00:20 · ▼ seat-42 since 00:01:00 · +1 more',
    );
    expect(styled(line.lastFrame())).toBe(
      '{bold}Incidents ' +
        '{red}▲{/colour}{/intensity} seat-17 since 00:00:20 · ' +
        '{bold}{cyan}▼{/colour}{/intensity} seat-42 since 00:01:00 · +1 more',
    );
    line.unmount();
  });

  it('no room for any incident: only the count, with no leading separator', () => {
    const line = render(
      <IncidentLine incidents={{ items: [], none: null, falseRate: '', more: '3 open' }} />,
    );
    expect(plain(line.lastFrame())).toBe('Incidents 3 open');
    line.unmount();
  });

  it('an incident with the rate after it', () => {
    const line = render(
      <IncidentLine
        incidents={{
          items: [{ symbol: '◆', tone: 'failover', text: 'failover seat-43 since 00:02:30' }],
          none: null,
          falseRate: 'chance: 0.02 false a day',
          more: '',
        }}
      />,
    );
    expect(styled(line.lastFrame())).toBe(
      '{bold}Incidents {magenta}◆{/colour}{/intensity}' +
        ' failover seat-43 since 00:02:30{dim} · chance: 0.02 false a day{/intensity}',
    );
    line.unmount();
  });
});
