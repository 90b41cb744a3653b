import './force-colour.js';
import { render } from 'ink-testing-library';
import { describe, expect, it } from 'vitest';
import { ShardTable } from '../../src/ui/shard-table.js';
import type { ShardTableView } from '../../src/ui/view-model.js';
import { plain, styled } from './frame-style.js';

// Column widths from screen-layout.ts (shardColumns): load 7, fair 8, relative 7, p 10,
// streak 6; numbers right-aligned, the mark and the id (idWidth + 1) and the streak left.
const table: ShardTableView = {
  title: 'Shards · flagged first',
  heading: 'shard           load    fair    rel          p streak',
  empty: null,
  rows: [
    {
      mark: '▲',
      tone: 'hotspot',
      shard: 'seat-17',
      load: '912',
      fair: '638',
      relative: '1.43x',
      p: '2.1e-9',
      streak: '3',
      bar: { load: 0.9, ceiling: 0.6, floor: null },
    },
    {
      mark: ' ',
      tone: 'plain',
      shard: 'seat-3',
      load: '640',
      fair: '638',
      relative: '1.00x',
      p: '≥0.5',
      streak: '-',
      bar: { load: 0.45, ceiling: 0.6, floor: 0.2 },
    },
    {
      mark: '▼',
      tone: 'cold',
      shard: 'seat-42',
      load: '0',
      fair: '638',
      relative: '0.00x',
      p: '<1e-300',
      streak: '2',
      bar: { load: 0, ceiling: 0.6, floor: 0.2 },
    },
  ],
};

describe('ShardTable', () => {
  it('title, heading, then one row per shard with its columns aligned and its bar', () => {
    // Bars of 10 cells: ceiling 0.6 -> cell 5; loads 0.9 -> 8, 0.45 -> 4, 0 -> 0; floor 0.2 -> 2.
    const panel = render(
      <ShardTable table={table} width={80} rows={3} idWidth={12} barWidth={10} />,
    );
    expect(plain(panel.lastFrame())).toBe(
      'Shards · flagged first\n' +
        'shard           load    fair    rel          p streak\n' +
        '▲seat-17          912     638  1.43x    2.1e-9 3      ▒▒▒▒▒┃███\n' +
        ' seat-3           640     638  1.00x      ≥0.5 -      ▒▒▒▒▒┃\n' +
        '▼seat-42            0     638  0.00x   <1e-300 2      ▒ ╎  ┃',
    );
    expect(styled(panel.lastFrame())).toBe(
      '{bold}Shards · flagged first{/intensity}\n' +
        '{dim}shard           load    fair    rel          p streak{/intensity}\n' +
        '{bold}{red}▲seat-17      {/colour}{/intensity}    912     638  1.43x    2.1e-9 3      ' +
        '{dim}▒▒▒▒▒{/intensity}{bold}┃{/intensity}{red}███{/colour}\n' +
        ' seat-3           640     638  1.00x      ≥0.5 -      ' +
        '{dim}▒▒▒▒▒{/intensity}{bold}┃{/intensity}\n' +
        '{bold}{cyan}▼seat-42      {/colour}{/intensity}      0     638  0.00x   <1e-300 2      ' +
        '{dim}▒ ╎  {/intensity}{bold}┃{/intensity}',
    );
    panel.unmount();
  });

  it('draws only the rows it has room for, and keeps its height when it has fewer', () => {
    const two = render(<ShardTable table={table} width={80} rows={1} idWidth={12} barWidth={10} />);
    expect(plain(two.lastFrame())).toBe(
      'Shards · flagged first\n' +
        'shard           load    fair    rel          p streak\n' +
        '▲seat-17          912     638  1.43x    2.1e-9 3      ▒▒▒▒▒┃███',
    );
    two.unmount();
    const waiting = render(
      <ShardTable
        table={{ title: 'Shards', heading: 'shard load', rows: [], empty: 'no window yet' }}
        width={80}
        rows={3}
        idWidth={12}
        barWidth={10}
      />,
    );
    expect(styled(waiting.lastFrame())).toBe(
      '{bold}Shards{/intensity}\n{dim}shard load{/intensity}\n{dim}no window yet{/intensity}\n\n',
    );
    waiting.unmount();
  });

  it('an id longer than its cell is cut with an ellipsis and the columns stay aligned', () => {
    const long = render(
      <ShardTable
        table={{ ...table, rows: [{ ...table.rows[1], shard: 'checkout-eu-west-7' }] }}
        width={80}
        rows={1}
        idWidth={12}
        barWidth={10}
      />,
    );
    expect(plain(long.lastFrame()).split('\n')[2]).toBe(
      ' checkout-eu-…    640     638  1.00x      ≥0.5 -      ▒▒▒▒▒┃',
    );
    long.unmount();
  });
});
