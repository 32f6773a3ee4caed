/**
 * Missing values as every learner reads them. A numeric value is missing when it is NaN (the frame's
 * marker) or infinite (no learner can use it, and one infinity would poison every running statistic).
 * A nominal value is missing when it is not one of the feature's codes 0 … values−1; readers validate
 * codes upstream, so this only guards the learner's tables.
 */

/** True when `x` is a finite number: `x − x` is 0 for finite x and NaN for NaN and ±Infinity. */
export function isPresent(x: number): boolean {
  return x - x === 0;
}

/** The category code `x` of a nominal feature with `values` codes, or −1 when missing or out of range. */
export function nominalCode(x: number, values: number): number {
  return x >= 0 && x < values && Math.floor(x) === x ? x : -1;
}
