import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { TEMME_COEFFICIENTS } from '../../src/chance/temme-coefficients.js';

// test/chance/reference/temme.json, from make-temme-reference.py beside it (mpmath 1.3.0, 60
// digits): the Taylor coefficients of c_k(eta), c_0 by Cauchy's integral of its closed form
// 1/mu - 1/eta and the higher orders by the recursion of NIST DLMF 8.12.11, independent of
// the generator scripts/temme-coefficients.py.
const reference = JSON.parse(
  readFileSync(new URL('reference/temme.json', import.meta.url), 'utf8'),
) as { coefficients: string[][] };

describe('TEMME_COEFFICIENTS', () => {
  it('ten orders of thirty coefficients each', () => {
    expect(TEMME_COEFFICIENTS).toHaveLength(10);
    for (const order of TEMME_COEFFICIENTS) expect(order).toHaveLength(30);
  });

  it('every coefficient is the double nearest the reference value', () => {
    // The table is generated in exact rational arithmetic and rounded once, so each entry
    // is the nearest double: equality, no tolerance.
    reference.coefficients.forEach((order, k) =>
      order.forEach((text, n) => {
        expect(TEMME_COEFFICIENTS[k][n], `d[${k}][${n}]`).toBe(Number(text));
      }),
    );
  });

  it('the first coefficients as exact fractions', () => {
    // NIST DLMF 8.12.12 and DiDonato and Morris (1986), ACM TOMS 12, table of d_kn (from
    // memory); each also agrees with the reference file above.
    const fractions: [k: number, n: number, value: number][] = [
      [0, 3, 1 / 864],
      [0, 4, 1 / 2835],
      [0, 5, -139 / 777600],
      [0, 6, 1 / 25515],
      [1, 1, -1 / 288],
      [1, 2, 1 / 378],
      [1, 3, -77 / 77760],
      [1, 4, 1 / 4860],
      [2, 0, 25 / 6048],
      [2, 1, -139 / 51840],
      [2, 2, 1 / 1296],
      [3, 0, 101 / 155520],
    ];
    for (const [k, n, value] of fractions) {
      expect(TEMME_COEFFICIENTS[k][n], `d[${k}][${n}]`).toBe(value);
    }
  });
});
