import { RandomDraws } from '../src/scenario/random-draws.js';

/**
 * Seeded over-dispersed traffic for calibration runs: per-shard counts drawn independently
 * from a negative binomial with mean mu_i and variance phi x mu_i, as a Poisson count whose
 * mean is itself Gamma distributed (shape mu / (phi - 1), scale phi - 1: the gamma-Poisson
 * mixture, variance mu + mu (phi - 1) = phi mu). phi = 1 is plain Poisson. Bursty traffic
 * where requests come in clumps (repeated keys, retries, batches) has this shape; the total
 * of a window is not fixed.
 */
export class OverdispersedDraws {
  private readonly draws: RandomDraws;
  private spareNormal: number | null = null;

  /** @param seed 0..2^32-1 */
  constructor(seed: number) {
    this.draws = new RandomDraws(seed);
  }

  /**
   * Writes one window of counts into `out`: shard i has mean `total x share_i` (shares null:
   * equal) and variance phi times that. Returns the window's total.
   */
  draw(total: number, shares: Float64Array | null, phi: number, out: Float64Array): number {
    const m = out.length;
    let sum = 0;
    for (let shard = 0; shard < m; shard++) {
      const mean = total * (shares === null ? 1 / m : shares[shard]);
      const count = this.negativeBinomial(mean, phi);
      out[shard] = count;
      sum += count;
    }
    return sum;
  }

  /** A negative binomial count with the given mean and variance phi x mean (phi >= 1). */
  negativeBinomial(mean: number, phi: number): number {
    if (mean <= 0) return 0;
    if (phi <= 1) return this.draws.poisson(mean);
    const shape = mean / (phi - 1);
    return this.draws.poisson(this.gamma(shape) * (phi - 1));
  }

  /**
   * A Gamma(shape, 1) number: G. Marsaglia and W. W. Tsang, "A simple method for generating
   * gamma variables", ACM TOMS 26(3), 2000 (the squeeze and log acceptance as published);
   * shape below 1 through their boost Gamma(shape + 1) x U^(1 / shape).
   */
  gamma(shape: number): number {
    if (shape < 1) {
      const u = this.draws.uniform();
      return this.gamma(shape + 1) * Math.pow(u === 0 ? Number.MIN_VALUE : u, 1 / shape);
    }
    const d = shape - 1 / 3;
    const c = 1 / Math.sqrt(9 * d);
    for (;;) {
      let x: number;
      let v: number;
      do {
        x = this.normal();
        v = 1 + c * x;
      } while (v <= 0);
      v = v * v * v;
      const u = this.draws.uniform();
      if (u < 1 - 0.0331 * x * x * x * x) return d * v;
      if (u > 0 && Math.log(u) < 0.5 * x * x + d * (1 - v + Math.log(v))) return d * v;
    }
  }

  /** A standard normal number: the polar method (G. Marsaglia and T. A. Bray, SIAM Review 6(3), 1964). */
  private normal(): number {
    if (this.spareNormal !== null) {
      const spare = this.spareNormal;
      this.spareNormal = null;
      return spare;
    }
    for (;;) {
      const u = 2 * this.draws.uniform() - 1;
      const v = 2 * this.draws.uniform() - 1;
      const s = u * u + v * v;
      if (s > 0 && s < 1) {
        const factor = Math.sqrt((-2 * Math.log(s)) / s);
        this.spareNormal = v * factor;
        return u * factor;
      }
    }
  }
}
