import { lgamma as gammaln } from 'lib-r-math.js';
import { mersenne, unsafeUniformIntDistribution, type RandomGenerator } from 'pure-rand';
import { UsageError } from '../errors/usage-error.js';

/** Largest accepted `--seed`: the Mersenne Twister is seeded with 32 bits. */
export const largestSeed = 0xffff_ffff;

/**
 * Seeded random draws for simulated traffic: uniform numbers, whole numbers
 * and Poisson counts, all from one pure-rand Mersenne Twister stream, so the
 * same seed and the same sequence of calls give the same numbers on every
 * run. Not for anything secret.
 */
export class RandomDraws {
  private readonly generator: RandomGenerator;

  /** @param seed a whole number from 0 to 2^32 - 1 (`--seed`) */
  constructor(seed: number) {
    if (!Number.isSafeInteger(seed) || seed < 0 || seed > largestSeed) {
      throw new UsageError(
        '--seed',
        String(seed),
        `is not a whole number from 0 to ${largestSeed}`,
      );
    }
    this.generator = mersenne(seed);
  }

  /**
   * A uniform number in [0, 1) with 53 random bits, built from two 32-bit
   * outputs as in Matsumoto and Nishimura's genrand_res53 (mt19937ar.c, 2002).
   */
  uniform(): number {
    const high = this.generator.unsafeNext() >>> 5;
    const low = this.generator.unsafeNext() >>> 6;
    return (high * 67_108_864 + low) / 9_007_199_254_740_992;
  }

  /** A uniform whole number from `from` to `to`, both included (pure-rand's unbiased method). */
  integer(from: number, to: number): number {
    return unsafeUniformIntDistribution(from, to, this.generator);
  }

  /**
   * A Poisson count with the given mean: sequential-search inversion below
   * mean 10 (cost about mean + 1 steps), above it the transformed rejection
   * method PTRS of W. Hörmann, "The transformed rejection method for
   * generating Poisson random variables", Insurance: Mathematics and
   * Economics 12 (1993), constant expected cost. Exact in distribution up to
   * floating-point rounding. Mean 0 gives 0.
   */
  poisson(mean: number): number {
    if (!(mean >= 0) || !Number.isFinite(mean)) {
      throw new RangeError(`a Poisson mean must be finite and >= 0, got ${mean}`);
    }
    if (mean === 0) return 0;
    return mean < 10 ? this.poissonByInversion(mean) : this.poissonByRejection(mean);
  }

  private poissonByInversion(mean: number): number {
    const u = this.uniform();
    let count = 0;
    let probability = Math.exp(-mean);
    let cumulative = probability;
    // The cap only guards against rounding leaving the cumulative sum a hair under u.
    while (u > cumulative && count < 1000) {
      count++;
      probability *= mean / count;
      cumulative += probability;
    }
    return count;
  }

  private poissonByRejection(mean: number): number {
    const logMean = Math.log(mean);
    const b = 0.931 + 2.53 * Math.sqrt(mean);
    const a = -0.059 + 0.02483 * b;
    const inverseAlpha = 1.1239 + 1.1328 / (b - 3.4);
    const acceptAtOnce = 0.9277 - 3.6224 / (b - 2);
    for (;;) {
      const u = this.uniform() - 0.5;
      const v = this.uniform();
      const distance = 0.5 - Math.abs(u);
      const count = Math.floor(((2 * a) / distance + b) * u + mean + 0.43);
      if (distance >= 0.07 && v <= acceptAtOnce) return count;
      if (count < 0 || (distance < 0.013 && v > distance)) continue;
      const logAcceptance =
        Math.log(v) + Math.log(inverseAlpha) - Math.log(a / (distance * distance) + b);
      if (logAcceptance <= -mean + count * logMean - gammaln(count + 1)) return count;
    }
  }
}
