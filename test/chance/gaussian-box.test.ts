import { describe, expect, it } from 'vitest';
import { normalBox } from '../../src/chance/gaussian-box.js';
import { relativeError } from './reference-data.js';

describe('normal limit of the box', () => {
  it('two halves: U_1 = -U_2 ~ N(0, 1/4), so the box is P(|U_1| < 0.1) = 2 Phi(0.2) - 1', () => {
    // Phi(0.2) = 0.5792597094391030 (Abramowitz and Stegun 1964, Handbook of Mathematical Functions, table 26.1).
    const box = normalBox([
      { share: 0.5, cut: 0.1 },
      { share: 0.5, cut: 0.1 },
    ]);
    expect(relativeError(box.probability, 2 * 0.579259709439103 - 1)).toBeLessThan(1e-8);
    expect(box.numericError).toBeLessThan(1e-7);
  });

  it('cuts summing to 0 or less leave no room: probability 0', () => {
    // sum U_i = 0 with every U_i < c_i needs sum c_i > 0 (worked by hand).
    expect(
      normalBox([
        { share: 0.5, cut: 0.1 },
        { share: 0.5, cut: -0.1 },
      ]).probability,
    ).toBe(0);
  });
});
