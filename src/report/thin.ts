import { integerAtLeast } from '../core/index.js';

/** One point of a series over rows; null where the figure is not defined (a gap in the line). */
export interface SeriesPoint {
  readonly row: number;
  readonly value: number | null;
}

/** Points per series a chart draws at most: about one per pixel column of the plot, twice over. */
export const MOST_POINTS = 1000;

/**
 * Thin a series to at most `most` points, deterministically: the points are cut into ⌊most/2⌋ runs of
 * consecutive points (of equal count, ±1), and each run keeps its lowest and its highest value, in
 * row order; a run with no defined value keeps one gap (so a gap shorter than two runs, under 4 pixels
 * at the default budget, is bridged). Keeping the extremes, not every k-th point,
 * means a dip after a drift stays on the chart however long the journal (min–max decimation, common
 * practice in plotting long time series).
 *
 * @example
 * thinSeries(points, 1000).length <= 1000; // true
 */
export function thinSeries(points: readonly SeriesPoint[], most: number = MOST_POINTS): SeriesPoint[] {
  integerAtLeast('report', 'most', most, 2);
  const n = points.length;
  if (n <= most) return points.slice();
  const runs = Math.floor(most / 2);
  const kept: SeriesPoint[] = [];
  for (let r = 0; r < runs; r++) {
    const start = Math.floor((r * n) / runs);
    const end = Math.floor(((r + 1) * n) / runs);
    let low = -1;
    let high = -1;
    for (let i = start; i < end; i++) {
      const v = points[i]!.value;
      if (v === null) continue;
      if (low < 0 || v < points[low]!.value!) low = i;
      if (high < 0 || v > points[high]!.value!) high = i;
    }
    if (low < 0) kept.push({ row: points[start]!.row, value: null });
    else if (low === high) kept.push(points[low]!);
    else kept.push(points[Math.min(low, high)]!, points[Math.max(low, high)]!);
  }
  return kept;
}
