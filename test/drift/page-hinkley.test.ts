import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { PageHinkley, type PageHinkleyDirection } from '../../src/drift/index.js';

/**
 * The Page-Hinkley statistics written out from the definition (Page 1954, in the drift-detection form
 * of PUBLISHED.md): m_T = Σ_{t≤T} α^{T−t} (x_t − x̄_t − δ) with x̄_t the mean of the first t values,
 * M_T = min(0, m_1 … m_T); the decrease test mirrors it with +δ and the maximum.
 */
function definition(xs: readonly number[], delta: number, fading: number): { up: number; down: number } {
  let up = 0;
  let down = 0;
  let upMin = 0;
  let downMax = 0;
  for (let T = 1; T <= xs.length; T++) {
    let m = 0;
    let mm = 0;
    for (let t = 1; t <= T; t++) {
      const mean = xs.slice(0, t).reduce((a, b) => a + b, 0) / t;
      const w = fading ** (T - t);
      m += w * (xs[t - 1]! - mean - delta);
      mm += w * (xs[t - 1]! - mean + delta);
    }
    up = m;
    down = mm;
    upMin = Math.min(upMin, m);
    downMax = Math.max(downMax, mm);
  }
  return { up: up - upMin, down: downMax - down };
}

function shifted(seed: number, length: number, at: number, shift: number): number[] {
  const rng = new Rng(seed);
  return Array.from({ length }, (_, t) => rng.normal() + (t >= at ? shift : 0));
}

describe('Page-Hinkley (Page, Biometrika 1954)', () => {
  for (const fading of [1, 0.95]) {
    it(`computes m_T − M_T and M′_T − m′_T as defined (fading ${fading})`, () => {
      const xs = shifted(5, 120, 60, 1.5);
      const up = new PageHinkley({ delta: 0.1, lambda: 1e9, direction: 'increase', fading });
      const down = new PageHinkley({ delta: 0.1, lambda: 1e9, direction: 'decrease', fading });
      for (let T = 1; T <= xs.length; T++) {
        up.update(xs[T - 1]!);
        down.update(-xs[T - 1]!);
        if (T % 10 !== 0) continue;
        expect(up.statistic).toBeCloseTo(definition(xs.slice(0, T), 0.1, fading).up, 9);
        expect(down.statistic).toBeCloseTo(
          definition(
            xs.slice(0, T).map((x) => -x),
            0.1,
            fading,
          ).down,
          9,
        );
      }
    });
  }

  it('alarms on the directions it watches and restarts after an alarm', () => {
    const first = (direction: PageHinkleyDirection, shift: number) => {
      const ph = new PageHinkley({ direction, delta: 0.5, lambda: 20 });
      const xs = shifted(9, 4000, 2000, shift);
      for (let t = 0; t < xs.length; t++) {
        if (ph.update(xs[t]!) === 'drift') {
          expect(ph.count).toBe(0);
          return t;
        }
      }
      return -1;
    };
    expect(first('increase', 2)).toBeGreaterThanOrEqual(2000);
    expect(first('increase', -2)).toBe(-1);
    expect(first('decrease', -2)).toBeGreaterThanOrEqual(2000);
    expect(first('decrease', 2)).toBe(-1);
    expect(first('both', 2)).toBeGreaterThanOrEqual(2000);
    expect(first('both', -2)).toBeGreaterThanOrEqual(2000);
  });

  it('raises no alarm before minCount values', () => {
    const ph = new PageHinkley({ lambda: 1, minCount: 50 });
    for (let t = 0; t < 49; t++) expect(ph.update(t < 10 ? 0 : 100)).toBe('stable');
    expect(ph.update(100)).toBe('drift');
  });
});
