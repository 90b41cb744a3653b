import { lgamma as gammaln } from 'lib-r-math.js';

/**
 * Published asymptotic forms for the fullest shard, shown beside the exact figures as a
 * cross-check (never used for a verdict). Formulas as recalled from the papers (from
 * memory); the tests compare them with the exact engine only where they are known to be tight.
 */

/** An asymptotic estimate of the fullest shard's count, with the regime it came from. */
export interface AsymptoticMaximum {
  /** Estimated count of the fullest shard, or null outside every published regime. */
  readonly count: number | null;
  /** Which regime of the source applies. */
  readonly regime: string;
  /** The source. */
  readonly source: string;
}

const RAAB_STEGER =
  'Raab and Steger (1998), "Balls into bins: a simple and tight analysis", RANDOM 98';

/**
 * The fullest shard's load with high probability, by regime of N relative to m log m.
 * Raab and Steger (1998), theorem 1, at alpha = 1:
 * - m / polylog(m) <= N << m log m: log m / log(m log m / N) * (1 + log log(m log m / N) / log(m log m / N));
 * - N = c m log m: (d_c - 1 + 1) log m, d_c the root > c of 1 + x (log c - log x + 1) - c = 0;
 * - m log m << N <= m polylog(m): N/m + sqrt(2 N log m / m);
 * - N >> m (log m)^3: N/m + sqrt(2 N log m / m * (1 - log log m / (2 log m))).
 * O(1) (a root search for the middle regime). Example: m = 1e5, N = 1e9 gives about 10 430.
 */
export function raabStegerMaximum(total: number, shards: number): AsymptoticMaximum {
  if (shards < 3 || total < 1)
    return { count: null, regime: 'outside the published regimes', source: RAAB_STEGER };
  const logM = Math.log(shards);
  const c = total / (shards * logM);
  if (total < shards / logM ** 3) {
    return { count: null, regime: 'N below m / polylog(m)', source: RAAB_STEGER };
  }
  if (c < 0.1) {
    const ratio = Math.log((shards * logM) / total);
    return {
      count: (logM / ratio) * (1 + Math.log(ratio) / ratio),
      regime: 'm/polylog(m) <= N << m log m',
      source: RAAB_STEGER,
    };
  }
  if (c <= 10) {
    const f = (x: number) => 1 + x * (Math.log(c) - Math.log(x) + 1) - c;
    let lo = c;
    let hi = c * 2 + 10;
    while (f(hi) > 0) hi *= 2;
    for (let i = 0; i < 200; i++) {
      const mid = (lo + hi) / 2;
      if (f(mid) > 0) lo = mid;
      else hi = mid;
    }
    return { count: ((lo + hi) / 2) * logM, regime: 'N = c m log m', source: RAAB_STEGER };
  }
  const fair = total / shards;
  if (total <= shards * logM ** 3) {
    return {
      count: fair + Math.sqrt((2 * total * logM) / shards),
      regime: 'm log m << N <= m polylog(m)',
      source: RAAB_STEGER,
    };
  }
  const correction = 1 - Math.log(logM) / (2 * logM);
  return {
    count: fair + Math.sqrt(((2 * total * logM) / shards) * correction),
    regime: 'N >> m (log m)^3',
    source: RAAB_STEGER,
  };
}

/**
 * Expected fullest-shard count when N = m: Gamma^{-1}(m) - 3/2, Gonnet (1981), "Expected
 * length of the longest probe sequence in hash code searching", JACM 28(2). The inverse of
 * the gamma function is found by bisection on log Gamma (lib-r-math.js lgamma, R's lgammafn) above its minimum.
 * O(1). Example: m = 1e6 gives about 8.0.
 */
export function gonnetExpectedMaximum(shards: number): number {
  const target = Math.log(shards);
  let lo = 1.4616321449683623; // minimum of the gamma function
  let hi = 4;
  while (gammaln(hi) < target) hi *= 2;
  for (let i = 0; i < 200; i++) {
    const mid = (lo + hi) / 2;
    if (gammaln(mid) < target) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2 - 1.5;
}
