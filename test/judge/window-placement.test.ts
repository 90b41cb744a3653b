import { describe, expect, it } from 'vitest';
import { level, placementOf, shareAt } from '../../src/judge/window-placement.js';

describe('placementOf', () => {
  it('keeps the shares it is given, not a copy', () => {
    const shares = Float64Array.from([0.5, 0.25, 0.25]);
    const placement = placementOf(1000, 3, shares);
    expect(placement).toEqual({ total: 1000, shardCount: 3, shares });
    expect(placement.shares).toBe(shares);
    expect(placementOf(10, 4, null).shares).toBeNull();
  });
});

describe('shareAt', () => {
  it('1 / m under equal shares, else the shard’s own share', () => {
    expect(shareAt(null, 7, 64)).toBe(1 / 64);
    expect(shareAt(Float64Array.from([0.5, 0.25, 0.25]), 1, 3)).toBe(0.25);
  });
});

describe('level', () => {
  it('equal shares: the relative level and the whole count it stands for', () => {
    // 1.21x of a fair share of 1000 / 64 = 15.625 requests is 18.90625 requests.
    expect(level(1.21, true, 15.625)).toEqual({ relative: 1.21, requests: 18.90625 });
    // A quantile of 19 requests comes back as 19 / 15.625 = 1.216; the product rounds to 19.
    expect(level(19 / 15.625, true, 15.625).requests).toBe(19);
    // 0.1 * 3 is 0.30000000000000004 in binary floating point; rounded to 1e-6 it is 0.3.
    expect(level(0.1, true, 3).requests).toBe(0.3);
  });

  it('weighted shares: no single count stands for the level', () => {
    expect(level(1.3, false, 15.625)).toEqual({ relative: 1.3, requests: null });
  });
});
