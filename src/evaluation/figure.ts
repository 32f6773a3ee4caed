/**
 * A figure for a JSON report. Evaluators answer NaN where a figure is undefined (an empty view, a
 * kappa whose reference is perfect, the precision of a class never predicted); JSON would turn NaN
 * into null silently, so summaries say null on purpose.
 */
export function orNull(value: number): number | null {
  return Number.isNaN(value) ? null : value;
}
