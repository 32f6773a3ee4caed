import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { RunningStats } from '../../src/core/index.js';

/** Two-pass weighted mean and population variance: the textbook definition. */
function twoPass(xs: readonly number[], ws: readonly number[]): { mean: number; variance: number } {
  const total = ws.reduce((a, b) => a + b, 0);
  const mean = xs.reduce((a, x, i) => a + ws[i]! * x, 0) / total;
  const variance = xs.reduce((a, x, i) => a + ws[i]! * (x - mean) ** 2, 0) / total;
  return { mean, variance };
}

const close = (a: number, b: number) => Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(b));

describe('RunningStats (West 1979 weighted Welford)', () => {
  it('equals the two-pass weighted mean and variance (property)', () => {
    fc.assert(
      fc.property(
        fc.array(
          fc.tuple(
            fc.double({ min: -1e6, max: 1e6, noNaN: true }),
            fc.double({ min: 0.01, max: 10, noNaN: true }),
          ),
          { minLength: 1, maxLength: 200 },
        ),
        (pairs) => {
          const s = new RunningStats();
          for (const [x, w] of pairs) s.add(x, w);
          const want = twoPass(
            pairs.map((p) => p[0]),
            pairs.map((p) => p[1]),
          );
          return close(s.mean, want.mean) && close(s.variance, want.variance);
        },
      ),
      { seed: 20261201, numRuns: 300 },
    );
  });

  it('with unit weights gives the sample variance of a hand example', () => {
    const s = new RunningStats();
    for (const x of [2, 4, 4, 4, 5, 5, 7, 9]) s.add(x);
    // Population variance 4, sample variance 32/7 (a standard textbook example).
    expect(s.mean).toBe(5);
    expect(s.variance).toBeCloseTo(4, 12);
    expect(s.sampleVariance).toBeCloseTo(32 / 7, 12);
  });

  it('refuses a negative or NaN weight, and survives a state round trip', () => {
    const s = new RunningStats();
    expect(() => s.add(1, -1)).toThrow(/weight/);
    expect(() => s.add(1, Number.NaN)).toThrow(/weight/);
    s.add(3, 2);
    s.add(5, 1);
    const t = RunningStats.fromState(JSON.parse(JSON.stringify(s.state())));
    expect(t.mean).toBe(s.mean);
    expect(t.variance).toBe(s.variance);
  });
});
