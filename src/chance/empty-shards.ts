import { pnorm } from 'lib-r-math.js';
import { boxLogProbability } from './box-probability.js';
import type { ChanceCache } from './chance-cache.js';
import { logChoose } from './discrete-densities.js';
import { log1mExp, logAddExp } from './log-space.js';
import { logBinomialAtLeast, logBinomialAtMost, logPoissonAtLeast } from './tails.js';
import { shareClasses, type Placement } from './placement.js';
import { emptiestTail } from './shard-extremes.js';

/**
 * The number of empty shards E = #{i : x_i = 0} under random placement (the classical
 * occupancy problem; Feller 1968, vol. 1, ch. II.11 and IV.2).
 */

/** Result of the empty-shard test. */
export interface EmptyShardsTail {
  /** Natural log of P(E >= observed). */
  readonly logProbability: number;
  /** `exact`, `exact-terms` (sum of exact point probabilities), `normal`, `certain`. */
  readonly method: string;
}

/**
 * Mean and variance of the empty-shard count.
 * Mean sum_i (1 - p_i)^N; variance sum_i q_i (1 - q_i) + sum_{i != j} (q_ij - q_i q_j) with
 * q_i = (1 - p_i)^N and q_ij = (1 - p_i - p_j)^N. Every difference is formed in log space
 * (q_ij - q_i q_j = q_i q_j expm1(N log(1 - c_i c_j)), c = p / (1 - p)), so nothing cancels.
 * Cost O(1) for equal shares; O(k^2) for k distinct shares up to 3000, beyond that the
 * pair sum is expanded in powers of c_i c_j (four terms; relative error below
 * (N max c^2)^5 / 120). `cache` keeps the share classes (without one, the default:
 * chance-cache.ts).
 * Example: emptyShardMoments(makePlacement(3, 3)) has mean 3 (2/3)^3 = 8/9.
 */
export function emptyShardMoments(
  placement: Placement,
  cache?: ChanceCache,
): { mean: number; variance: number } {
  const n = placement.total;
  // Classes come in ascending share, so q = (1 - p)^N falls along them; once it underflows
  // (log below -746) every later class and every pair term with it is exactly 0 in doubles.
  const all = shareClasses(placement, cache);
  let live = 0;
  while (live < all.length && n * Math.log1p(-all[live].share) > -746) live++;
  const classes = live === all.length ? all : all.slice(0, live);
  let mean = 0;
  let variance = 0;
  const logQ = classes.map((c) => n * Math.log1p(-c.share));
  for (let a = 0; a < classes.length; a++) {
    const q = Math.exp(logQ[a]);
    mean += classes[a].count * q;
    variance += classes[a].count * q * -Math.expm1(logQ[a]);
  }
  // The positive part, for the rounding floor below.
  const diagonal = variance;
  const c = classes.map((k) => (k.share < 1 ? k.share / (1 - k.share) : Infinity));
  const pairTerm = (a: number, b: number) => {
    const product = c[a] * c[b];
    if (product >= 1) return -Math.exp(logQ[a] + logQ[b]);
    return Math.exp(logQ[a] + logQ[b]) * Math.expm1(n * Math.log1p(-product));
  };
  if (classes.length <= 3000) {
    for (let a = 0; a < classes.length; a++) {
      const ca = classes[a].count;
      if (ca >= 2) variance += ca * (ca - 1) * pairTerm(a, a);
      for (let b = a + 1; b < classes.length; b++)
        variance += 2 * ca * classes[b].count * pairTerm(a, b);
    }
  } else {
    // expm1(N log(1 - x)) = sum_r a_r x^r with a_1 = -N, a_2 = N(N-1)/2 ... (binomial series
    // of (1 - x)^N - 1), so sum_{i != j} q_i q_j expm1(...) = sum_r a_r [(sum q c^r)^2 - sum q^2 c^2r].
    let coefficient = 1;
    for (let r = 1; r <= 4; r++) {
      coefficient *= -(n - r + 1) / r;
      let linear = 0;
      let square = 0;
      for (let a = 0; a < classes.length; a++) {
        const qa = Math.exp(logQ[a]);
        const term = qa * c[a] ** r;
        linear += classes[a].count * term;
        square += classes[a].count * term * term;
      }
      variance += coefficient * (linear * linear - square);
    }
  }
  // The diagonal and the (negative) pair terms cancel wherever E is nearly fixed, exactly at
  // N = 1 (E = m - 1): what is left below 1e-14 of the diagonal is rounding (1.1e-16 on
  // shares 1e-9 : 1 : 2, printed by odds as a variance), not a spread.
  return { mean, variance: variance > 1e-14 * diagonal ? variance : 0 };
}

/**
 * log P(E = e) for equal shares: C(m, e) ((m - e)/m)^N P(no empty shard among m - e with N
 * requests), the last factor a box probability (every count >= 1) by Levin's representation.
 * Exact identity; O(1) box probability per call. `convolved` tells whether the box
 * probability took its exact convolution (the costly branch) rather than its expansion.
 */
function logEmptyExactly(
  total: number,
  shards: number,
  empty: number,
  cache: ChanceCache | undefined,
): { logProbability: number; convolved: boolean } {
  const occupied = shards - empty;
  if (occupied === 0) return { logProbability: total === 0 ? 0 : -Infinity, convolved: false };
  if (occupied > total) return { logProbability: -Infinity, convolved: false };
  // The terms are summed (all positive): 1e-5 relative each is 100 times under the bar.
  const allHit = boxLogProbability(
    total,
    [{ share: 1 / occupied, count: occupied, lower: 1, upper: Infinity }],
    { tolerance: 1e-5, cache },
  );
  return {
    logProbability:
      logChoose(shards, empty) + total * Math.log1p(-empty / shards) + allHit.logProbability,
    convolved: allHit.method === 'exact',
  };
}

/**
 * Costs of the two exact equal-share methods, in occupancy-chain steps (N min(N, m) of
 * those, about 5 ns each): a point probability whose box probability takes the expansion
 * (2-15 us) and one that convolves (30-250 us). Measured with `npx tsx
 * bench/chance.bench.ts` (the empty-shard rows time both methods).
 */
const EXPANDED_TERM_STEPS = 2e3;
const CONVOLVED_TERM_STEPS = 5e4;

/**
 * How many exact point probabilities the summation in emptyShardsTail visits, from the
 * normal shape of E (mean, standard deviation): terms start `distance` standard deviations
 * out on the summed side and stop once they fall e^-41.4 below the sum; at least two, at
 * most the whole range. An estimate for choosing the method, not a bound used in the sum.
 */
function estimatedTerms(distance: number, deviation: number, range: number): number {
  // E all but fixed (its variance underflows once requests far outnumber shards): a term or two.
  if (!(deviation > 0) || !Number.isFinite(distance)) return Math.min(range, 2);
  const d = Math.max(0, distance);
  const span = deviation * (Math.sqrt(d * d + 2 * 41.4) - d);
  return Math.min(range, span + 2);
}

/**
 * log P(E >= observed) from the exact occupancy chain: after each request the number of
 * occupied shards k stays with probability k/m or grows by one with probability (m - k)/m
 * (Feller 1968, vol. 1, ch. IX.9). Kept rescaled so that no state underflows while it can
 * still matter. O(N min(N, m)).
 */
function occupancyChainTail(total: number, shards: number, observed: number): number {
  const states = Math.min(total, shards) + 1;
  let current = new Float64Array(states);
  let next = new Float64Array(states);
  current[0] = 1;
  let logScale = 0;
  for (let ball = 1; ball <= total; ball++) {
    next.fill(0);
    const top = Math.min(ball, shards);
    let peak = 0;
    for (let k = 1; k <= top; k++) {
      const stay = current[k] * (k / shards);
      const grow = current[k - 1] * ((shards - k + 1) / shards);
      next[k] = stay + grow;
      if (next[k] > peak) peak = next[k];
    }
    if (peak < 1e-200) {
      for (let k = 0; k <= top; k++) next[k] /= peak;
      logScale += Math.log(peak);
    }
    [current, next] = [next, current];
  }
  // E >= observed  <=>  occupied <= m - observed.
  let tail = 0;
  let all = 0;
  const limit = shards - observed;
  for (let k = 0; k < states; k++) {
    all += current[k];
    if (k <= limit) tail += current[k];
  }
  // Complement when the wanted side is the big one keeps relative precision for tiny tails.
  if (tail > 0.5 * all) {
    let rest = 0;
    for (let k = limit + 1; k < states; k++) rest += current[k];
    return Math.log1p(-rest / all);
  }
  return tail > 0 ? Math.log(tail) + logScale : -Infinity;
}

/**
 * log P(E >= observed), the empty-shard p-value.
 * Equal shares, two exact methods, whichever costs less: the occupancy chain (N min(N, m)
 * steps, `exact`) or the exact point probabilities (logEmptyExactly, `exact-terms`) summed
 * from the observed count outward (or the complement summed on the other side when that
 * side is smaller), until terms fall below 1e-18 of the sum (one box probability a term,
 * about as many terms as 9 standard deviations of E hold). The terms' cost is estimated
 * from the moments of E and the first term, and capped at the chain's. Weighted shares: exact for observed = 1
 * (P(some shard empty), the emptiest-shard machinery); beyond it the larger of a binomial
 * law matched on the exact mean and variance and the Poisson limit (reported as
 * `conservative-moments`: never below the exact tail in the tests, but up to orders of
 * magnitude above it when N is far below m), else the normal limit with continuity
 * correction (Weiss 1958; Renyi 1962), reported as `normal`.
 * Cost: the cheaper of O(N min(N, m)) and O(number of terms) box probabilities. `cache`
 * as for emptyShardMoments.
 * Example: emptyShardsTail(makePlacement(2, 2), 1) = log(1/2).
 */
export function emptyShardsTail(
  placement: Placement,
  observed: number,
  cache?: ChanceCache,
): EmptyShardsTail {
  const n = placement.total;
  const m = placement.shardCount;
  if (observed <= 0) return { logProbability: 0, method: 'certain' };
  const minEmpty = Math.max(0, m - n);
  if (observed <= minEmpty) return { logProbability: 0, method: 'certain' };
  if (observed > m - (n > 0 ? 1 : 0)) return { logProbability: -Infinity, method: 'exact' };
  if (placement.shares !== null) {
    if (observed === 1) {
      // P(E >= 1) is P(some shard is empty), the emptiest shard's tail at load 0 (which
      // sweeps the shares when they are many).
      const tail = emptiestTail(placement, 0, { cache });
      return { logProbability: tail.logProbability, method: 'exact' };
    }
    const { mean, variance } = emptyShardMoments(placement, cache);
    // The occupancy count is under-dispersed (variance below its mean); a binomial law
    // matched on the exact mean and variance follows it far better than the Poisson limit.
    // It is fitted to whichever of the empty and the occupied count is the rarer, so that
    // few requests on many shards (mostly empty) are modelled by their few collisions.
    // Near N = m the fit falls short in the far tail, so the answer is the larger of it and
    // the Poisson limit with the exact mean, which lies above the exact tail in every tested
    // case: conservative, so the empty count alone cannot raise a false cold finding.
    const occupiedMean = m - mean;
    let fitted = -Infinity;
    if (mean <= occupiedMean && variance > 0 && variance < mean) {
      const trials = Math.max(observed, Math.round((mean * mean) / (mean - variance)));
      fitted = logBinomialAtLeast(observed, trials, Math.min(1, mean / trials));
    } else if (mean > occupiedMean && variance > 0 && variance < occupiedMean) {
      const trials = Math.max(
        m - observed,
        Math.round((occupiedMean * occupiedMean) / (occupiedMean - variance)),
      );
      // E >= observed  <=>  occupied <= m - observed
      fitted = logBinomialAtMost(m - observed, trials, Math.min(1, occupiedMean / trials));
    }
    if (fitted > -Infinity) {
      return {
        logProbability: Math.max(fitted, logPoissonAtLeast(observed, mean)),
        method: 'conservative-moments',
      };
    }
    const z = (observed - 0.5 - mean) / Math.sqrt(Math.max(variance, 1e-300));
    return { logProbability: logNormalUpper(z), method: 'normal' };
  }
  const { mean, variance } = emptyShardMoments(placement, cache);
  const maxEmpty = m - (n > 0 ? 1 : 0);
  // Two exact methods; the cheaper answers. The chain's cost is known in advance; the
  // terms' cost is estimated from the shape of E and the cost of the first term (whether
  // its box probability convolves), and the summation gives way to the chain once it has
  // spent what the chain would cost (so a wrong estimate costs at most twice the chain).
  const chainSteps = n * Math.min(n, m);
  const chain = (): EmptyShardsTail => ({
    logProbability: occupancyChainTail(n, m, observed),
    method: 'exact',
  });
  const deviation = Math.sqrt(variance);
  const upward = observed >= mean;
  const terms = upward
    ? estimatedTerms((observed - mean) / deviation, deviation, maxEmpty - observed + 1)
    : estimatedTerms((mean - observed + 1) / deviation, deviation, observed - minEmpty);
  if (chainSteps <= Math.max(terms * EXPANDED_TERM_STEPS, CONVOLVED_TERM_STEPS)) return chain();
  const [start, stop, direction] = upward ? [observed, maxEmpty, 1] : [observed - 1, minEmpty, -1];
  let logSum = -Infinity;
  let spent = 0;
  for (let e = start; direction > 0 ? e <= stop : e >= stop; e += direction) {
    const term = logEmptyExactly(n, m, e, cache);
    const cost = term.convolved ? CONVOLVED_TERM_STEPS : EXPANDED_TERM_STEPS;
    spent += cost;
    if (e === start && chainSteps <= terms * cost) return chain();
    if (spent > chainSteps) return chain();
    logSum = logAddExp(logSum, term.logProbability);
    if (term.logProbability < logSum - 41.4 && Math.abs(e - mean) > 1) break;
  }
  return {
    logProbability: upward ? logSum : log1mExp(Math.min(0, logSum)),
    method: 'exact-terms',
  };
}

/** log P(Z >= z) for a standard normal Z: lib-r-math.js pnorm(z, 0, 1, false, true) (R's pnorm). */
function logNormalUpper(z: number): number {
  return pnorm(z, 0, 1, false, true);
}
