import { describe, expect, it } from 'vitest';
import { makePlacement, shareClasses } from '../../src/chance/placement.js';

describe('placements', () => {
  it('documented examples: the birthday problem, and shares [0.5, 0.25, 0.25] in two classes', () => {
    const birthday = makePlacement(23, 365);
    expect(birthday).toEqual({ total: 23, shardCount: 365, shares: null });
    expect(shareClasses(birthday)).toEqual([{ share: 1 / 365, count: 365 }]);
    const weighted = makePlacement(100, 3, [2, 1, 1]);
    expect(shareClasses(weighted)).toEqual([
      { share: 0.25, count: 2 },
      { share: 0.5, count: 1 },
    ]);
  });

  it('names the bad field of an invalid placement', () => {
    expect(() => makePlacement(-1, 4)).toThrow(/requests/);
    expect(() => makePlacement(2 ** 53, 4)).toThrow(/requests/);
    expect(() => makePlacement(10, 0)).toThrow(/shards/);
    expect(() => makePlacement(10, 2, [1])).toThrow(/weights/);
  });
});
