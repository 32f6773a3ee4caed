import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { binaryGainBound } from '../../src/learners/split-merit.js';

/** Entropy in bits of non-negative weights, by its definition (Shannon 1948). */
function entropy(...w: number[]): number {
  const total = w.reduce((a, b) => a + b, 0);
  let h = 0;
  for (const x of w) if (x > 0) h -= (x / total) * Math.log2(x / total);
  return h;
}

/**
 * Information gain of splitting classes 0 and 1 into a lower branch (b0, b1) and an upper one (a0, a1),
 * by its definition (Quinlan, "Induction of decision trees", Machine Learning 1, 1986): the parent's
 * entropy less the branches' entropies weighted by their shares.
 */
function gain(b0: number, b1: number, a0: number, a1: number): number {
  const below = b0 + b1;
  const above = a0 + a1;
  const total = below + above;
  return entropy(b0 + a0, b1 + a1) - (below / total) * entropy(b0, b1) - (above / total) * entropy(a0, a1);
}

describe('the χ² bound on the information gain of a two-class binary split', () => {
  // KL(P‖Q) ≤ ln(1 + χ²(P‖Q)) ≤ χ²(P‖Q) (Gibbs & Su, International Statistical Review 70, 2002; from
  // memory), and the gain is the mutual information of class and branch, KL of the joint from the
  // product of its margins (Cover & Thomas, Elements of Information Theory, 2nd ed., §2.3; from
  // memory). The first test checks the inequality itself against the gain's definition.
  it('is never below the gain, on tables from even to pure, tiny to huge weights', () => {
    const rng = new Rng(41);
    const scales = [1e-6, 1, 200, 1e6];
    let checked = 0;
    for (let i = 0; i < 20_000; i++) {
      const scale = scales[i % scales.length]!;
      const table: [number, number, number, number] = [0, 0, 0, 0];
      for (let c = 0; c < 4; c++) table[c] = rng.next() * scale;
      // Every fifth table has an empty cell: a pure branch, or a class all on one side.
      if (i % 5 === 0) table[(i / 5) % 4] = 0;
      const bound = binaryGainBound(...table);
      if (Number.isNaN(bound)) continue;
      const g = gain(...table);
      expect(bound + 1e-12).toBeGreaterThanOrEqual(g);
      checked++;
    }
    expect(checked).toBeGreaterThan(19_000);
  });

  it('is about twice the gain when class and branch are nearly independent, and 0 when they are', () => {
    // Mutual information ≈ χ²/2 for small dependence: the second-order expansion of KL (Kullback,
    // Information Theory and Statistics, 1959; from memory). A wrong χ² would break the ratio.
    for (const eps of [1e-3, 1e-4]) {
      const table = [0.25 + eps, 0.25 - eps, 0.25 - eps, 0.25 + eps] as const;
      const ratio = binaryGainBound(...table) / gain(...table);
      expect(ratio).toBeGreaterThan(1.99);
      expect(ratio).toBeLessThan(2.01);
    }
    expect(binaryGainBound(30, 10, 60, 20)).toBe(0);
    expect(Number.isNaN(binaryGainBound(0, 0, 5, 7))).toBe(true);
  });
});
