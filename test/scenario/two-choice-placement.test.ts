import { describe, expect, it } from 'vitest';
import { simulateTwoChoice, wilsonInterval } from '../../src/scenario/two-choice-placement.js';

describe('simulateTwoChoice', () => {
  it('on one shard: every request lands there, so the interval of the mean is a point', () => {
    // Worked by hand: the fullest of one shard is the request count in every run; the sample
    // variance of 30 equal maxima is 0.
    const estimate = simulateTwoChoice(1, 50, 40, 30, 7);
    expect(estimate.meanMaximum).toBe(50);
    expect(estimate.meanInterval).toEqual([50, 50]);
    expect(estimate.exceedProbability).toBe(1);
    expect(estimate.exceedInterval).toEqual(wilsonInterval(30, 30));
  });

  it('gives a normal interval about the mean, narrowing as runs grow', () => {
    const few = simulateTwoChoice(256, 256, 1e9, 25, 11);
    const many = simulateTwoChoice(256, 256, 1e9, 400, 11);
    for (const estimate of [few, many]) {
      const [low, high] = estimate.meanInterval;
      expect(low).toBeLessThanOrEqual(estimate.meanMaximum);
      expect(high - estimate.meanMaximum).toBeCloseTo(estimate.meanMaximum - low, 12);
      expect(estimate.exceedProbability).toBe(0);
    }
    // Two choices on 256 shards with one request each: the fullest holds 2 to 4 in practice
    // (log log m / log 2 = 2.4 plus a constant; Azar, Broder, Karlin and Upfal 1999).
    expect(many.meanMaximum).toBeGreaterThanOrEqual(2);
    expect(many.meanMaximum).toBeLessThanOrEqual(4);
    expect(many.meanInterval[1] - many.meanInterval[0]).toBeLessThan(
      few.meanInterval[1] - few.meanInterval[0],
    );
  });
});
