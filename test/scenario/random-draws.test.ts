import { chiSquaredDistributionTable, mean as sampleMean, sampleVariance } from 'simple-statistics';
import { describe, expect, it } from 'vitest';
import { RandomDraws } from '../../src/scenario/random-draws.js';
import { UsageError } from '../../src/errors/usage-error.js';

function draws(seed: number, count: number, draw: (random: RandomDraws) => number): number[] {
  const random = new RandomDraws(seed);
  return Array.from({ length: count }, () => draw(random));
}

/** Sample mean and variance (n - 1): simple-statistics' mean and sampleVariance. */
function meanAndVariance(values: number[]): { mean: number; variance: number } {
  return { mean: sampleMean(values), variance: sampleVariance(values) };
}

describe('RandomDraws', () => {
  it('validates the seed, naming --seed', () => {
    expect(() => new RandomDraws(-1)).toThrow(UsageError);
    expect(() => new RandomDraws(2 ** 32)).toThrow(
      '--seed: "4294967296" is not a whole number from 0 to 4294967295',
    );
    expect(() => new RandomDraws(1.5)).toThrow('--seed');
    expect(() => new RandomDraws(2 ** 32 - 1)).not.toThrow();
  });

  it('repeats its stream for a seed and changes it with the seed', () => {
    expect(draws(7, 50, (random) => random.uniform())).toEqual(
      draws(7, 50, (random) => random.uniform()),
    );
    expect(draws(7, 50, (random) => random.uniform())).not.toEqual(
      draws(8, 50, (random) => random.uniform()),
    );
  });

  it('draws uniform numbers in [0, 1) with mean 1/2 and variance 1/12', () => {
    const values = draws(1, 100_000, (random) => random.uniform());
    expect(Math.min(...values)).toBeGreaterThanOrEqual(0);
    expect(Math.max(...values)).toBeLessThan(1);
    const { mean, variance } = meanAndVariance(values);
    // Uniform(0,1): mean 1/2, variance 1/12 (textbook). Tolerance 5 standard errors:
    // sd of the mean sqrt(1/12/n) = 0.00091; sd of the variance about sqrt(1/180/n) = 0.00024.
    expect(Math.abs(mean - 0.5)).toBeLessThan(0.0046);
    expect(Math.abs(variance - 1 / 12)).toBeLessThan(0.0012);
  });

  it('draws whole numbers in a closed range', () => {
    const values = draws(2, 10_000, (random) => random.integer(3, 5));
    expect(new Set(values)).toEqual(new Set([3, 4, 5]));
  });

  it('draws Poisson counts with mean and variance equal to the mean asked for', () => {
    // Poisson(lambda): mean = variance = lambda (textbook). 20000 draws; tolerances are 5 standard
    // errors: sqrt(lambda / n) for the mean and sqrt((2 lambda^2 + lambda) / n) for the variance.
    const n = 20_000;
    for (const lambda of [0.3, 3, 9.99, 10, 37.5, 1000, 1e6]) {
      const { mean, variance } = meanAndVariance(draws(11, n, (random) => random.poisson(lambda)));
      expect(Math.abs(mean - lambda), `mean at ${lambda}`).toBeLessThan(5 * Math.sqrt(lambda / n));
      expect(Math.abs(variance - lambda), `variance at ${lambda}`).toBeLessThan(
        5 * Math.sqrt((2 * lambda * lambda + lambda) / n),
      );
    }
    expect(new RandomDraws(1).poisson(0)).toBe(0);
    expect(() => new RandomDraws(1).poisson(-1)).toThrow(RangeError);
    expect(() => new RandomDraws(1).poisson(Number.NaN)).toThrow(RangeError);
  });

  it('follows the Poisson probabilities in both of its methods (chi-square goodness of fit)', () => {
    // Reference: the Poisson pmf exp(-lambda) lambda^k / k!; critical value from simple-statistics'
    // chiSquaredDistributionTable at upper-tail 0.005. Neighbouring k are pooled until each bin
    // expects at least 5 draws (common practice); the last bin is the whole upper tail.
    const table = chiSquaredDistributionTable as unknown as Record<number, Record<string, number>>;
    for (const lambda of [4, 15]) {
      const n = 50_000;
      const values = draws(3, n, (random) => random.poisson(lambda));
      const binStarts: number[] = [0];
      const expected: number[] = [0];
      let probability = Math.exp(-lambda);
      let below = 0;
      for (let k = 0; ; k++) {
        if (k > 0) probability *= lambda / k;
        if (expected[expected.length - 1] >= 5) {
          binStarts.push(k);
          expected.push(0);
        }
        expected[expected.length - 1] += n * probability;
        below += probability;
        if (n * (1 - below) < 5) break;
      }
      expected[expected.length - 1] += n * (1 - below);
      if (expected[expected.length - 1] < 5) {
        expected[expected.length - 2] += expected.pop() as number;
        binStarts.pop();
      }
      const observed = expected.map(() => 0);
      for (const value of values) {
        let bin = binStarts.length - 1;
        while (binStarts[bin] > value) bin--;
        observed[bin]++;
      }
      const statistic = observed.reduce(
        (sum, count, bin) => sum + (count - expected[bin]) ** 2 / expected[bin],
        0,
      );
      const degrees = expected.length - 1;
      expect(degrees).toBeLessThanOrEqual(30);
      expect(statistic, `lambda ${lambda}, ${expected.length} bins`).toBeLessThan(
        table[degrees]['0.005'],
      );
    }
  });
});
