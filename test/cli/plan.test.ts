import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { planCommand } from '../../src/cli/plan.js';
import { UsageError } from '../../src/errors/usage-error.js';

// Source of truth: exact probabilities of the fullest of m equal shards under random
// placement of N requests, computed offline with python-flint 0.9.0 (exact rationals) and
// mpmath 1.3.0 (40 digits), from the textbook identity (common practice)
//   P(max <= k) = N! / m^N [x^N] (sum_{j<=k} x^j / j!)^m
// with this script (run once, not by the tests):
//
//   from flint import fmpq_poly, fmpq, fmpz
//   from mpmath import mp, mpf, log1p, expm1
//   mp.dps = 40
//   def p_max_le(N, m, k):
//       fac = [fmpz(1)]
//       for j in range(1, N + 1): fac.append(fac[-1] * j)
//       cut = lambda p: fmpq_poly(p.coeffs()[:N + 1])
//       result, power, e = fmpq_poly([1]), fmpq_poly([fmpq(1, fac[j]) for j in range(min(k, N) + 1)]), m
//       while e:
//           if e & 1: result = cut(result * power)
//           e >>= 1
//           if e: power = cut(power * power)
//       c = result.coeffs()[N] if result.degree() >= N else fmpq(0)
//       return c * fac[N] / fmpz(m) ** N
//   def exceed(N, m, k): return mpf(1 - p_max_le(N, m, k - 1))      # via p/q, P(max >= k)
//   def per_day(p, windows): return -expm1(windows * log1p(-p))
//
// `plan --rate 200 --window 10s --capacity 18 --shards 16`: N = 2000 requests a window,
// capacity 180 a window, 8640 windows a day.
//   exceed(2000, 16, 181)          = 1.0429783553546632e-5, per_day(., 8640) = 0.086172814031179418
//   smallest k with P(max <= k) >= 0.999 on (2000, 16): 168 (P(max <= 168) = 0.99901817,
//     P(max <= 167) = 0.99862111)
//   per_day(exceed(2000, m, 181)): m = 16 0.0862, m = 17 0.0018146 (first <= 0.01)
//   largest N on 16 shards with per_day <= 0.01 (bisection on N): 1933 (0.0098252; 1934 gives 0.0101703)
// The tails are documented to a relative error of 1e-3 (src/chance/shard-extremes.ts).

async function plan(argv: string[]): Promise<string> {
  const stdout = new PassThrough();
  let text = '';
  stdout.on('data', (chunk: Buffer) => (text += chunk.toString()));
  const code = await planCommand.run(argv, {
    stdout,
    stderr: new PassThrough(),
    stdin: new PassThrough(),
    env: {},
  });
  expect(code).toBe(0);
  return text;
}

const options = ['--rate', '200', '--window', '10s', '--capacity', '18', '--shards', '16'];

describe('shardwise plan', () => {
  it('reports the exact ceiling, chance of exceeding and planning answers (JSON)', async () => {
    const result = JSON.parse(await plan([...options, '--json'])) as {
      capacityPerWindow: number;
      rows: {
        shards: number;
        requestsPerWindow: number;
        fairShare: number;
        ceiling: number;
        headroom: number;
        exceedPerWindow: number;
        exceedPerDay: number;
        exceedIsBound: boolean;
        asymptotic: { count: number };
      }[];
      smallestShardsMeetingTarget: number;
      largestRateMeetingTarget: number;
    };
    expect(result.capacityPerWindow).toBe(180);
    expect(result.rows).toHaveLength(1);
    const row = result.rows[0];
    expect([row.shards, row.requestsPerWindow, row.fairShare, row.ceiling]).toEqual([
      16, 2000, 125, 168,
    ]);
    expect(row.headroom).toBe(168 / 125);
    expect(Math.abs(row.exceedPerWindow / 1.0429783553546632e-5 - 1)).toBeLessThan(1e-3);
    expect(Math.abs(row.exceedPerDay / 0.086172814031179418 - 1)).toBeLessThan(1e-3);
    expect(row.exceedIsBound).toBe(false);
    // Raab and Steger (1998), Theorem 1 for N >= m (ln m)^3, from memory:
    // N/m + sqrt(2 (N/m) ln m (1 - ln ln m / (2 ln m))).
    const lnM = Math.log(16);
    const raab = 125 + Math.sqrt(2 * 125 * lnM * (1 - Math.log(lnM) / (2 * lnM)));
    expect(row.asymptotic.count).toBeCloseTo(raab, 9);
    expect(result.smallestShardsMeetingTarget).toBe(17);
    // Rates round to requests a window: every rate below (1933 + 0.5) / 10 gives at most
    // 1933; the bisection stops within 1e-6 of its upper end, capacity x shards = 288.
    expect(result.largestRateMeetingTarget).toBeLessThan(193.35);
    expect(result.largestRateMeetingTarget).toBeGreaterThan(193.35 - 288e-6);
  });

  it('prints the same figures as a table', async () => {
    expect((await plan(options)).split('\n')).toEqual([
      '200 requests/s, 10s windows (2000 requests each), capacity 18 requests/s per shard (180 per window)',
      '',
      'shards  fair share  ceiling@0.999  headroom  P(exceed)/window  P(exceed)/day  asymptotic',
      '    16         125            168    1.344x          1.043e-5        0.08617     148.784',
      '',
      'Smallest shard count with P(exceed)/day <= 0.01: 17',
      'Largest rate on 16 shards with P(exceed)/day <= 0.01: 193.35 requests/s',
      'Asymptotic column: Raab and Steger (1998), fullest shard with high probability; a cross-check only.',
      '',
    ]);
  });

  it('takes every power of two of a range of shard counts, and its ends', async () => {
    const result = JSON.parse(
      await plan(['--rate', '200', '--capacity', '18', '--shards', '10..40', '--json']),
    ) as { rows: { shards: number }[]; largestRateMeetingTarget: number | null };
    expect(result.rows.map((row) => row.shards)).toEqual([10, 16, 32, 40]);
    expect(result.largestRateMeetingTarget).toBeNull();
  });

  it('names the option and value of a bad setting', async () => {
    await expect(plan(['--rate', '200', '--capacity', '18'])).rejects.toThrow(UsageError);
    await expect(plan(['--rate', '200', '--capacity', '18'])).rejects.toThrow('--shards');
    await expect(plan(['--rate', '200', '--capacity', '18', '--shards', '40..10'])).rejects.toThrow(
      '40..10',
    );
  });
});
