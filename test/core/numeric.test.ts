import { describe, expect, it } from 'vitest';
import { erfc, hoeffdingBound, hoeffdingCount, logGamma } from '../../src/core/index.js';

describe('hoeffdingBound', () => {
  // PUBLISHED.md [derived] from ε = √(R² ln(1/δ) / 2n), Domingos & Hulten, KDD 2000.
  it.each([
    [200, 0.200737],
    [1000, 0.089772],
    [10000, 0.028388],
  ])('R = 1, δ = 1e-7, n = %i gives ε = %f', (n, epsilon) => {
    expect(Math.abs(hoeffdingBound(1, 1e-7, n) - epsilon)).toBeLessThan(1e-6);
  });
  it.each([
    [200, 0.200737],
    [1000, 0.089772],
    [10000, 0.028388],
  ])('hoeffdingCount inverts it: R = 1, δ = 1e-7, n = %i for ε = %f', (n, epsilon) => {
    // The same pairs read backwards; ε to 6 decimals gives n to within 2 · 0.5e-6 / ε (4e-5 at 0.028).
    expect(Math.abs(hoeffdingCount(1, 1e-7, epsilon) / n - 1)).toBeLessThan(1e-4);
  });
});

describe('special functions', () => {
  it('logGamma matches ln((n−1)!) computed by summation', () => {
    for (const n of [1, 2, 3, 10, 11, 50, 170]) {
      let lf = 0;
      for (let k = 2; k < n; k++) lf += Math.log(k);
      expect(Math.abs(logGamma(n) - lf)).toBeLessThan(1e-10 * Math.max(1, lf));
    }
    // Γ(1/2) = √π (Abramowitz & Stegun 6.1.8).
    expect(Math.abs(logGamma(0.5) - 0.5 * Math.log(Math.PI))).toBeLessThan(1e-12);
  });

  it('erfc matches tabulated values to 1.5e-7 absolute', () => {
    // Abramowitz & Stegun, Table 7.1 (erf 0.5 = 0.5204998778, erf 1 = 0.8427007929, erf 2 = 0.9953222650);
    // the bound is that of their approximation 7.1.26.
    const table: [number, number][] = [
      [0.5, 1 - 0.5204998778],
      [1, 1 - 0.8427007929],
      [2, 1 - 0.995322265],
      [-1, 1 + 0.8427007929],
    ];
    for (const [x, want] of table) expect(Math.abs(erfc(x) - want)).toBeLessThan(1.5e-7);
  });
});
