import { describe, expect, it } from 'vitest';
import { SpaceSaving } from '../../src/keys/space-saving.js';
import { RandomDraws } from '../../src/scenario/random-draws.js';
import { drawIndex, zipfProbabilities } from '../../src/scenario/key-popularity.js';

// Source of truth: the guarantees of Space-Saving as published in A. Metwally, D. Agrawal and
// A. El Abbadi, "Efficient computation of frequent and top-k elements in data streams",
// ICDT 2005: Lemma 3.3 (a key's count exceeds its true frequency by at most its recorded
// error, which is at most the smallest counter, itself at most N / k) and Lemma 3.4 (every
// key with frequency above the smallest counter is monitored); and the counts sum to N.
// The streams are seeded Zipf draws; exact counts come from a plain Map.

function zipfStream(seed: number, length: number, keys: number, exponent: number): string[] {
  const draws = new RandomDraws(seed);
  const probabilities = zipfProbabilities(keys, exponent);
  const cumulative = new Float64Array(keys);
  let sum = 0;
  probabilities.forEach((p, i) => {
    sum += p;
    cumulative[i] = sum;
  });
  cumulative[keys - 1] = 1;
  return Array.from({ length }, () => `k${drawIndex(cumulative, draws.uniform())}`);
}

describe('SpaceSaving against exact counts (Metwally et al. 2005, Lemmas 3.3 and 3.4)', () => {
  for (const [seed, capacity, exponent] of [
    [1, 16, 1.1],
    [2, 16, 0.6],
    [3, 64, 0.9],
    [4, 8, 0],
  ] as const) {
    it(`k = ${capacity}, Zipf(${exponent}) over 5000 keys, 50 000 requests (seed ${seed})`, () => {
      const stream = zipfStream(seed, 50_000, 5000, exponent);
      const exact = new Map<string, number>();
      const summary = new SpaceSaving(capacity);
      for (const key of stream) {
        exact.set(key, (exact.get(key) ?? 0) + 1);
        summary.add(key, 1);
      }
      const top = summary.top();
      const n = stream.length;
      expect(summary.total).toBe(n);
      expect(top.reduce((total, hitter) => total + hitter.count, 0)).toBe(n);
      const smallest = summary.smallestCount;
      expect(smallest).toBeLessThanOrEqual(n / capacity);
      for (const hitter of top) {
        const truth = exact.get(hitter.key) ?? 0;
        expect(hitter.count).toBeGreaterThanOrEqual(truth);
        expect(hitter.count - hitter.overestimate).toBeLessThanOrEqual(truth);
        expect(hitter.overestimate).toBeLessThanOrEqual(smallest);
      }
      const monitored = new Set(top.map((hitter) => hitter.key));
      for (const [key, truth] of exact) if (truth > smallest) expect(monitored.has(key)).toBe(true);
    });
  }

  it('weighted requests keep the bounds (weights summed as N)', () => {
    const draws = new RandomDraws(9);
    const exact = new Map<string, number>();
    const summary = new SpaceSaving(10);
    let n = 0;
    for (let at = 0; at < 20_000; at++) {
      const key = `w${Math.floor(draws.uniform() ** 3 * 400)}`;
      const weight = 1 + Math.floor(draws.uniform() * 5);
      n += weight;
      exact.set(key, (exact.get(key) ?? 0) + weight);
      summary.add(key, weight);
    }
    for (const hitter of summary.top()) {
      const truth = exact.get(hitter.key) as number;
      expect(hitter.count).toBeGreaterThanOrEqual(truth);
      expect(hitter.count - hitter.overestimate).toBeLessThanOrEqual(truth);
      expect(hitter.overestimate).toBeLessThanOrEqual(n / 10);
    }
  });

  it('the doc example: two counters, three keys', () => {
    const top = new SpaceSaving(2);
    top.add('a', 1);
    top.add('b', 1);
    top.add('c', 1);
    // Worked by hand from the algorithm (Metwally et al. 2005, Fig. 1): c takes over the
    // first smallest counter (a's, in slot 0), inheriting its count 1 as its overestimate.
    expect(top.top()).toEqual([
      { key: 'c', count: 2, overestimate: 1 },
      { key: 'b', count: 1, overestimate: 0 },
    ]);
  });

  it('refuses zero counters', () => {
    expect(() => new SpaceSaving(0)).toThrow(RangeError);
  });
});
