import { describe, expect, it } from 'vitest';
import { screenLayout } from '../../src/ui/screen-layout.js';
import { spreadView } from '../../src/ui/spread-view.js';
import type { WindowView } from '../../src/ui/view-common.js';

/**
 * A window whose fine histogram (120 inner bins from 0.8x to 1.2x) holds: 1 shard below
 * 0.8x, 3 and 2 in fine bins 1 and 2, 10 each in fine bins 60 and 61, 1 in fine bin 120 and
 * 2 above 1.2x; half a shard predicted in each of fine bins 57 to 64. Ceiling 1.15x, floor
 * 0.85x.
 */
function windowView(sharesMatchVerdict = true, predictedRequests = 6400): WindowView {
  const observed = new Uint32Array(122);
  const expected = new Float64Array(122);
  observed[0] = 1;
  observed[1] = 3;
  observed[2] = 2;
  observed[60] = 10;
  observed[61] = 10;
  observed[120] = 1;
  observed[121] = 2;
  for (let bin = 57; bin <= 64; bin++) expected[bin] = 0.5;
  return {
    histogram: {
      low: 0.8,
      high: 1.2,
      bins: 120,
      observed,
      expected,
      predictedRequests,
      groupedShares: false,
    },
    judgement: { ceiling: { relative: 1.15 }, floor: { relative: 0.85 }, requests: 6400 },
    sharesMatchVerdict,
  } as unknown as WindowView;
}

describe('spreadView', () => {
  it('80 columns: 24 coarse bins of 5 fine ones and the two edge bins, scaled to the tallest', () => {
    // (24 + 2) x 3 cells = 78 fit 79; 26 bins in all.
    const view = spreadView(windowView(), screenLayout({ columns: 80, rows: 24 }));
    expect(view.bins).toHaveLength(26);
    const drawn = view.bins
      .map((bin, index) => [index, bin.observed, bin.expected, bin.tone] as const)
      .filter(([, seen, predicted]) => seen > 0 || predicted > 0);
    expect(drawn).toEqual([
      // Below 0.8x, ending under the floor: cold.
      [0, 0.1, 0, 'cold'],
      // [0.8x, 0.817x): under the floor too.
      [1, 0.5, 0, 'cold'],
      [12, 1, 0.2, 'plain'],
      [13, 1, 0.2, 'plain'],
      // [1.183x, 1.2x) and above: past the ceiling.
      [24, 0.1, 0, 'hotspot'],
      [25, 0.2, 0, 'hotspot'],
    ]);
    expect(view.empty).toBeNull();
  });

  it('the axis: edge bounds at the ends, 1x at its bin, the ceiling mirrored where it would collide', () => {
    // 78 cells: 1x at cell 38; the ceiling's mark at cell 65, its label ending there since
    // '┃1.15x ceiling' from 64 would run into '>1.20x' at 71.
    const view = spreadView(windowView(), screenLayout({ columns: 80, rows: 24 }));
    expect(view.axis).toBe(
      '<0.80x' +
        ' '.repeat(32) +
        '|1x' +
        ' '.repeat(11) +
        'ceiling 1.15x┃' +
        ' '.repeat(5) +
        '>1.20x ',
    );
  });

  it('the legend with the notes that apply, fitted to the panel', () => {
    const layout = screenLayout({ columns: 80, rows: 24 });
    expect(spreadView(windowView(), layout).legend).toBe(
      '█ shards seen  ⣿ random placement predicts · tallest 10 shards',
    );
    // Predicted on fewer requests than the window had (robust mode divides them), and not
    // on the verdict's shares. At 120 columns (110 cells after the title) all of it would
    // take 111: the tallest count, ranked lowest, takes its short form.
    expect(
      spreadView(windowView(false, 3200), screenLayout({ columns: 120, rows: 40 })).legend,
    ).toBe(
      '█ shards seen  ⣿ random placement predicts · top 10 · predicted on 3200 judged req · declared shares',
    );
    // At 80 columns (70 cells) every note short still takes 90: the tallest count goes,
    // then the last of rank 1, leaving 63.
    expect(spreadView(windowView(false, 3200), layout).legend).toBe(
      '█ shards seen  ⣿ random placement predicts · on 3200 judged req',
    );
  });

  it('nothing to draw: before any window, and a window without requests', () => {
    const layout = screenLayout({ columns: 80, rows: 24 });
    expect(spreadView(null, layout)).toEqual({
      title: 'Spread',
      legend: '█ shards seen  ⣿ random placement predicts',
      bins: [],
      axis: '',
      empty: 'No window judged yet.',
    });
    expect(spreadView({ histogram: null } as unknown as WindowView, layout).empty).toBe(
      'No requests: nothing to draw.',
    );
  });
});
