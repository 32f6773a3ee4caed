import { describe, expect, it } from 'vitest';
import { decodeI32, Rng } from '../../src/core/index.js';
import { stateField } from '../../src/drift/detector.js';
import { Adwin, adwinHoeffdingCut, adwinVarianceCut } from '../../src/drift/index.js';
import { abrupt, errorStream } from '../support/drift-streams.js';

describe('ADWIN (Bifet & Gavaldà, SDM 2007)', () => {
  it('has the Hoeffding-form ε_cut of PUBLISHED.md at δ = 0.002', () => {
    // PUBLISHED.md, ADWIN [derived]: ε_cut = √((1/2m) ln(4/δ′)), m = 1/(1/n₀ + 1/n₁), δ′ = δ/n, n = n₀ + n₁:
    // 0.359155 at n₀ = n₁ = 100 and 0.170345 at n₀ = n₁ = 500.
    expect(adwinHoeffdingCut(100, 100, 0.002)).toBeCloseTo(0.359155, 6);
    expect(adwinHoeffdingCut(500, 500, 0.002)).toBeCloseTo(0.170345, 6);
    // Derived again here from the definition: m = 50, δ′ = 1e-5 → √(0.01 · ln 400000).
    expect(adwinHoeffdingCut(100, 100, 0.002)).toBeCloseTo(Math.sqrt(0.01 * Math.log(400_000)), 12);
  });

  it('has the variance-form ε_cut of the paper', () => {
    // Bifet & Gavaldà 2007 §3: ε_cut = √((2/m) σ² ln(2/δ′)) + (2/3m) ln(2/δ′). Worked by hand for
    // n₀ = 100, n₁ = 300, σ² = 0.16, δ = 0.002: 1/m = 1/100 + 1/300 = 1/75, ln(2/δ′) = ln(400000).
    const log = Math.log(400_000);
    expect(adwinVarianceCut(100, 300, 0.16, 0.002)).toBeCloseTo(
      Math.sqrt((2 / 75) * 0.16 * log) + (2 / (3 * 75)) * log,
      12,
    );
    // A window with no variance still needs a gap of (2/3m) ln(2/δ′) to cut.
    expect(adwinVarianceCut(100, 300, 0, 0.002)).toBeCloseTo((2 / 225) * log, 12);
  });

  it('keeps O(M log W) buckets, at most M of each size (exponential histogram, §4)', () => {
    for (const bucketsPerSize of [2, 5]) {
      const adwin = new Adwin({ bucketsPerSize });
      const sizes: number[] = [];
      for (let t = 1; t <= 200_000; t++) {
        adwin.update(0);
        if (t === 1000 || t === 200_000) sizes.push(adwin.buckets);
      }
      // A constant stream never cuts: the window holds everything.
      expect(adwin.width).toBe(200_000);
      const perLevel = decodeI32(stateField('adwin', adwin.snapshot().state, 'used') as string);
      expect(Math.max(...perLevel)).toBeLessThanOrEqual(bucketsPerSize);
      const bound = bucketsPerSize * (Math.log2(200_000 / bucketsPerSize) + 2);
      expect(adwin.buckets).toBeLessThanOrEqual(bound);
      // 200× the values costs about log₂ 200 ≈ 7.6 more levels, not 200× the buckets.
      expect(sizes[1]! - sizes[0]!).toBeLessThanOrEqual(bucketsPerSize * 9);
    }
  });

  it('reports the exact mean and variance of its window', () => {
    const rng = new Rng(3);
    const values = new Float64Array(20_000);
    for (let t = 0; t < values.length; t++) values[t] = t < 8000 ? 0.3 * rng.next() : 0.4 + 0.6 * rng.next();
    const adwin = new Adwin({ checkEvery: 7 });
    for (let t = 0; t < values.length; t++) {
      adwin.update(values[t]!);
      if (t % 997 !== 0 && t !== values.length - 1) continue;
      const w = values.subarray(t + 1 - adwin.width, t + 1);
      const mean = w.reduce((a, b) => a + b, 0) / w.length;
      const variance = w.reduce((a, b) => a + (b - mean) ** 2, 0) / w.length;
      expect(adwin.mean).toBeCloseTo(mean, 10);
      expect(adwin.variance).toBeCloseTo(variance, 10);
    }
    // The window has let go of the old concept.
    expect(adwin.width).toBeLessThan(12_000 + 500);
    expect(adwin.mean).toBeCloseTo(0.7, 1);
  });

  it('drops the stale part of its window on a drift, in either direction', () => {
    for (const [before, after] of [
      [0.2, 0.6],
      [0.6, 0.2],
    ] as const) {
      const values = errorStream(11, 8000, before, after, abrupt(4000));
      const adwin = new Adwin();
      let at = -1;
      for (let t = 0; t < values.length; t++) {
        if (adwin.update(values[t]!) === 'drift' && at < 0) {
          at = t;
          // At least three quarters of the 4,000 old-concept values are gone (a cut falls on a bucket
          // boundary, and the newest old values cannot be told apart from the new ones yet).
          expect(adwin.width - (t + 1 - 4000)).toBeLessThanOrEqual(1000);
        }
      }
      expect(at).toBeGreaterThanOrEqual(4000);
      expect(Math.abs(adwin.estimate - after)).toBeLessThan(0.05);
    }
  });

  it('warns through its larger warning δ before or when it drifts on a small change', () => {
    // 0.2 → 0.3 is a slow change to detect: a cut at warningDelta = 0.01 appears before one at δ = 0.002
    // on most streams (the warning ε is the smaller of the two for every split).
    let warnedFirst = 0;
    for (let s = 0; s < 20; s++) {
      const values = errorStream(100 + s, 12_000, 0.2, 0.3, abrupt(4000));
      const adwin = new Adwin();
      let warned = false;
      for (let t = 0; t < values.length; t++) {
        const level = adwin.update(values[t]!);
        if (level === 'warning' && t >= 4000) warned = true;
        if (level === 'drift' && t >= 4000) break;
      }
      if (warned) warnedFirst++;
    }
    expect(warnedFirst).toBeGreaterThanOrEqual(15);
  });
});
