import { describe, expect, it } from 'vitest';
import { ShoalError } from '../../src/core/index.js';
import { compactRows, fixed, grouped, percent } from '../../src/report/format.js';
import { niceTicks } from '../../src/report/scale.js';
import { type SeriesPoint, thinSeries } from '../../src/report/thin.js';

describe('thinSeries', () => {
  const dip = (n: number, at: number): SeriesPoint[] =>
    Array.from({ length: n }, (_, i) => ({
      row: 250 * (i + 1),
      value: i === at ? 0.2 : 0.9 + 0.05 * Math.sin(i / 7),
    }));

  it('keeps a short series whole and thins a long one to at most `most` points, in row order, deterministically', () => {
    const short = dip(999, 10);
    expect(thinSeries(short, 1000)).toEqual(short);
    for (const n of [1001, 20_000, 123_457]) {
      const kept = thinSeries(dip(n, n - 5), 1000);
      expect(kept.length).toBeLessThanOrEqual(1000);
      expect(kept.length).toBeGreaterThanOrEqual(500);
      for (let i = 1; i < kept.length; i++) expect(kept[i]!.row).toBeGreaterThan(kept[i - 1]!.row);
      expect(thinSeries(dip(n, n - 5), 1000)).toEqual(kept);
    }
  });

  it('keeps a one-point dip and the highest point wherever they fall', () => {
    for (const at of [0, 7_777, 19_999]) {
      const points = dip(20_000, at);
      const kept = thinSeries(points, 1000);
      expect(kept).toContainEqual(points[at]);
      const top = Math.max(...points.map((p) => p.value!));
      expect(Math.max(...kept.map((p) => p.value!))).toBe(top);
    }
  });

  it('keeps a gap that covers a whole run of points, and refuses a budget below 2', () => {
    // 4,000 points in 50 runs of 80: undefined values over rows 1,000–1,199 cover runs 13 and 14 (1,040–1,199) whole.
    const points: SeriesPoint[] = Array.from({ length: 4000 }, (_, i) => ({
      row: i,
      value: i >= 1000 && i < 1200 ? null : 0.5,
    }));
    const kept = thinSeries(points, 100);
    expect(kept.filter((p) => p.value === null).map((p) => p.row)).toEqual([1040, 1120]);
    expect(() => thinSeries(points, 1)).toThrow(ShoalError);
  });
});

describe('axis ticks and number formats', () => {
  it('puts ticks at 1, 2 or 5 × 10^k inside the interval (Heckbert, Graphics Gems, 1990, from memory)', () => {
    expect(niceTicks(0, 9000, 8)).toEqual([0, 2000, 4000, 6000, 8000]);
    expect(niceTicks(0, 5_004_000, 8)).toEqual([0, 1e6, 2e6, 3e6, 4e6, 5e6]);
    expect(niceTicks(-0.2, 1, 6)).toEqual([-0.2, 0, 0.2, 0.4, 0.6, 0.8, 1]);
    expect(niceTicks(0, 1, 6)).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    expect(niceTicks(0, 1000, 8)).toEqual([0, 200, 400, 600, 800, 1000]);
    expect(niceTicks(3, 3, 5)).toEqual([3]);
  });

  it('formats numbers the same in every locale', () => {
    expect(grouped(5_004_000)).toBe('5,004,000');
    expect(grouped(-1234.6)).toBe('-1,235');
    expect(grouped(999)).toBe('999');
    expect(compactRows(2500)).toBe('2.5k');
    expect(compactRows(1_500_000)).toBe('1.5M');
    expect(compactRows(800)).toBe('800');
    expect(percent(0.97734)).toBe('97.73%');
    expect(fixed(null, 3)).toBe('—');
    expect(fixed(Number.NaN, 3)).toBe('—');
  });
});
