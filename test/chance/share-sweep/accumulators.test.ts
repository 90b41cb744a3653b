import { describe, expect, it } from 'vitest';
import {
  type CutAccumulator,
  type TailAccumulator,
  addCut,
  addTail,
  rankTail,
  storeTails,
} from '../../../src/chance/share-sweep/accumulators.js';

// Reference values from test/chance/reference/make-cut-reference.py (mpmath 1.3.0, 50
// digits): a Poisson shard's tail, elasticity, log mass and the Taylor coefficients u_0..u_5
// of u(t) = -d/dt log M(mean e^t), the Riccati solution addCut writes out.
const cases = [
  {
    name: 'side high, mean 20, k 30',
    edgeShift: 0,
    share: 0.02,
    k: 30,
    tail: 0.021818217525557391559,
    elasticity: 11.472343562247928219,
    logMass: -0.022059754568555465497,
    u: [
      0.2558891321159859385, 2.6243705690949318913, 11.234509431591238302, 23.311896744394341144,
      13.057415805056355293, -40.343039755506493578,
    ],
  },
  {
    name: 'side low, mean 20, k 10',
    edgeShift: 1,
    share: 0.02,
    k: 10,
    tail: 0.010811718826652723894,
    elasticity: -10.759263372641458136,
    logMass: -0.010870590176837502059,
    u: [
      -0.11759756214349805614, 1.0722072459135763924, -3.7750459434081439065, 5.2482483239584410831,
      2.1517444305031626434, -13.011384253105579797,
    ],
  },
  {
    // A tail below 1e-4: the log mass comes from four terms of the series of log(1 - T).
    name: 'side high, mean 10, k 30 (a small tail)',
    edgeShift: 0,
    share: 0.01,
    k: 30,
    tail: 2.5099512015279078234e-7,
    elasticity: 20.457430421295286673,
    logMass: -2.5099515165207122337e-7,
    u: [
      5.1347164953991515457e-6, 0.00010269435627329651904, 0.0010012705075623745736,
      0.006324271278216241328, 0.02898774036071237484, 0.10226700886656668632,
    ],
  },
];

function cutAccumulator(edgeShift: number): CutAccumulator {
  return {
    rate: 1000,
    edgeShift,
    logMassSum: 0,
    means: 0,
    u: new Float64Array(6),
    empty: false,
    uSpread: 0,
    tailSum: 0,
  };
}

function expectRelative(actual: number, expected: number, tolerance: number, what: string): void {
  expect(
    Math.abs(actual / expected - 1),
    `${what}: ${actual} against ${expected}`,
  ).toBeLessThanOrEqual(tolerance);
}

describe('addCut', () => {
  it.each(cases.map((c) => [c.name, c] as const))(
    '%s: log mass, mean, tail and u_0..u_5 as mpmath gives them',
    (_, c) => {
      const acc = cutAccumulator(c.edgeShift);
      addCut(acc, c.share, c.k, c.tail, c.elasticity);
      expect(acc.empty).toBe(false);
      expect(acc.means).toBeCloseTo(1000 * c.share, 12);
      expect(acc.tailSum).toBe(c.tail);
      // Rounding only: the inputs are doubles of the reference values, each step exact to a
      // few ulps, the recurrences to 1e-13 relative.
      expectRelative(acc.logMassSum, c.logMass, 1e-15, 'log mass');
      for (let n = 0; n < 6; n++) expectRelative(acc.u[n], c.u[n], 1e-12, `u_${n}`);
      expectRelative(acc.uSpread, Math.abs(c.u[0]) * (Math.abs(c.elasticity) + 1), 1e-14, 'spread');
    },
  );

  it('shards add up', () => {
    const acc = cutAccumulator(0);
    addCut(acc, cases[0].share, cases[0].k, cases[0].tail, cases[0].elasticity);
    addCut(acc, cases[2].share, cases[2].k, cases[2].tail, cases[2].elasticity);
    expect(acc.means).toBeCloseTo(30, 12);
    expectRelative(acc.logMassSum, cases[0].logMass + cases[2].logMass, 1e-15, 'log mass');
    expectRelative(acc.u[0], cases[0].u[0] + cases[2].u[0], 1e-12, 'u_0');
  });

  it('a shard certain to be cut makes the product empty and adds nothing', () => {
    const acc = cutAccumulator(0);
    addCut(acc, 0.02, 1, 1, 0);
    expect(acc.empty).toBe(true);
    expect(acc.tailSum).toBe(0);
    expect(acc.means).toBe(0);
  });
});

describe('tail sums and the two largest', () => {
  const fresh = (): TailAccumulator => ({
    reference: 0,
    sum: 0,
    squares: 0,
    first: -1,
    firstTail: 0,
    firstK: 0,
    second: -1,
    secondTail: 0,
    secondK: 0,
  });

  it('addTail sums tails and their squares and ranks the two largest', () => {
    const acc = fresh();
    addTail(acc, 0, 5, 0.25);
    addTail(acc, 1, 6, 0.5);
    addTail(acc, 2, 7, 0.125);
    addTail(acc, 3, 8, 0.375);
    expect(acc.sum).toBe(1.25);
    expect(acc.squares).toBe(0.0625 + 0.25 + 0.015625 + 0.140625);
    expect([acc.first, acc.firstTail, acc.firstK]).toEqual([1, 0.5, 6]);
    expect([acc.second, acc.secondTail, acc.secondK]).toEqual([3, 0.375, 8]);
  });

  it('rankTail: a tie with the largest does not displace it', () => {
    const acc = fresh();
    rankTail(acc, 0, 1, 0.5);
    rankTail(acc, 1, 2, 0.5);
    expect([acc.first, acc.second]).toEqual([0, 1]);
    expect(acc.sum).toBe(0);
  });

  it('storeTails sets the sums and the two largest, the reference untouched', () => {
    const acc = { ...fresh(), reference: -7 };
    storeTails(acc, 2, 3, 4, 0.5, 6, 7, 0.25, 9);
    expect(acc).toEqual({
      reference: -7,
      sum: 2,
      squares: 3,
      first: 4,
      firstTail: 0.5,
      firstK: 6,
      second: 7,
      secondTail: 0.25,
      secondK: 9,
    });
  });
});
