import chisquareQuantile from '@stdlib/stats-base-dists-chisquare-quantile';
import { integerAtLeast, openUnit, ShoalError } from '../core/index.js';
import { packScalars, stateField, unpackScalars } from './detector.js';

/**
 * Input drift on one nominal feature: the category frequencies of each window of `window` values are
 * compared with those of a reference window by Pearson's χ² test of homogeneity on the 2 × K table of
 * counts (Pearson 1900; any statistics handbook). The first window after a start or an alarm is the
 * reference; each later window is tested when it is full and then emptied (tumbling windows).
 *
 * - Categories whose expected count in a cell would fall below 5 are pooled into one cell before the
 *   test (Cochran, "Some methods for strengthening the common χ² tests", Biometrics 10, 1954; common
 *   practice), so that a rare category does not dominate the statistic; a new category that becomes
 *   common is not rare and counts in full.
 * - The critical value is the (1 − significance) quantile of χ² with (cells − 1) degrees of freedom, from
 *   `@stdlib/stats-base-dists-chisquare-quantile`, tabulated once per degree of freedom.
 * - Each test has false-alarm probability ≈ significance, so a stationary feature raises at most about
 *   (values / window − 1) · significance alarms over a stream (a union bound over the tests).
 * - On an alarm the window just tested becomes the reference: the feature adapts at once.
 * - Missing values (NaN) are skipped; any other code must be an integer in [0, K).
 *
 * Defaults (our choice): windows of 500 values, significance 10⁻⁶. By the union bound above a stationary
 * feature then raises on average 0.0004 false alarms per 200,000 values, and LED's 24 nominal features
 * 0.01 together (at 0.001 it was about 10 per LED stream, 0–39 measured over five seeds); a category
 * that shifts its share by 0.2 in a window of 500 still gives χ² ≈ 40, far above the 23.9 needed at
 * one degree of freedom.
 */
export type CategoryShiftOptions = {
  /** Values per window (reference and tested alike), ≥ 1. */
  readonly window: number;
  /** False-alarm probability of one test, in (0, 1). */
  readonly significance: number;
};

export const CATEGORY_SHIFT_DEFAULTS: CategoryShiftOptions = { window: 500, significance: 1e-6 };

const KIND = 'category-shift';
/** Cochran's rule: pool cells whose expected count is below this. */
const MIN_EXPECTED = 5;

export function resolveCategoryShift(
  owner: string,
  options: Partial<CategoryShiftOptions>,
): CategoryShiftOptions {
  const o = { ...CATEGORY_SHIFT_DEFAULTS, ...options };
  integerAtLeast(owner, 'nominal.window', o.window);
  openUnit(owner, 'nominal.significance', o.significance);
  return { window: o.window, significance: o.significance };
}

/** Pearson's χ² statistic and degrees of freedom of a 2 × K table, rare columns pooled. */
export interface ChiSquareResult {
  statistic: number;
  dof: number;
}

/**
 * Pearson's χ² for the homogeneity of two rows of counts over `k` columns, pooling the columns whose
 * smaller expected count is below 5 into one. Writes into `out` (no allocation).
 */
export function chiSquareHomogeneity(
  a: Float64Array,
  b: Float64Array,
  k: number,
  out: ChiSquareResult,
): ChiSquareResult {
  let na = 0;
  let nb = 0;
  for (let j = 0; j < k; j++) {
    na += a[j]!;
    nb += b[j]!;
  }
  const n = na + nb;
  let statistic = 0;
  let cells = 0;
  let pooledA = 0;
  let pooledB = 0;
  if (na > 0 && nb > 0) {
    const share = Math.min(na, nb) / n;
    for (let j = 0; j < k; j++) {
      const column = a[j]! + b[j]!;
      if (column === 0) continue;
      if (column * share < MIN_EXPECTED) {
        pooledA += a[j]!;
        pooledB += b[j]!;
        continue;
      }
      statistic += cell(a[j]!, b[j]!, na, nb, n);
      cells++;
    }
    if (pooledA + pooledB > 0) {
      statistic += cell(pooledA, pooledB, na, nb, n);
      cells++;
    }
  }
  out.statistic = statistic;
  out.dof = cells - 1;
  return out;
}

/** The contribution of one column: Σ over both rows of (observed − expected)² / expected. */
function cell(a: number, b: number, na: number, nb: number, n: number): number {
  const column = a + b;
  const ea = (column * na) / n;
  const eb = (column * nb) / n;
  return ((a - ea) * (a - ea)) / ea + ((b - eb) * (b - eb)) / eb;
}

export class CategoryShift {
  private readonly owner: string;
  private readonly categories: number;
  private readonly window: number;
  /** critical[d] is the χ² critical value for d degrees of freedom (index 0 unused). */
  private readonly critical: Float64Array;
  private reference: Float64Array;
  private current: Float64Array;
  private referenceCount = 0;
  private currentCount = 0;
  private readonly result: ChiSquareResult = { statistic: 0, dof: 0 };

  constructor(owner: string, categories: number, options: CategoryShiftOptions) {
    this.owner = owner;
    this.categories = categories;
    this.window = options.window;
    this.critical = new Float64Array(Math.max(categories, 1));
    for (let d = 1; d < categories; d++) this.critical[d] = chisquareQuantile(1 - options.significance, d);
    this.reference = new Float64Array(categories);
    this.current = new Float64Array(categories);
  }

  /** Feed one category code; true when the window just completed differs from the reference. */
  update(code: number): boolean {
    if (Number.isNaN(code)) return false;
    if (!(Number.isInteger(code) && code >= 0 && code < this.categories)) {
      throw new ShoalError(
        'invalid-row',
        `${this.owner}: expected a category code in [0, ${this.categories}), got ${code}`,
      );
    }
    if (this.referenceCount < this.window) {
      this.reference[code]!++;
      this.referenceCount++;
      return false;
    }
    this.current[code]!++;
    if (++this.currentCount < this.window) return false;
    const { statistic, dof } = chiSquareHomogeneity(
      this.reference,
      this.current,
      this.categories,
      this.result,
    );
    const shifted = dof >= 1 && statistic > this.critical[dof]!;
    if (shifted) {
      const t = this.reference;
      this.reference = this.current;
      this.current = t;
    }
    this.current.fill(0);
    this.currentCount = 0;
    return shifted;
  }

  reset(): void {
    this.reference.fill(0);
    this.current.fill(0);
    this.referenceCount = 0;
    this.currentCount = 0;
  }

  state(): unknown {
    return {
      counts: packScalars([this.referenceCount, this.currentCount]),
      reference: packScalars(Array.from(this.reference)),
      current: packScalars(Array.from(this.current)),
    };
  }

  load(state: unknown): void {
    const [referenceCount, currentCount] = unpackScalars(KIND, stateField(KIND, state, 'counts'), 2);
    this.reference.set(unpackScalars(KIND, stateField(KIND, state, 'reference'), this.categories));
    this.current.set(unpackScalars(KIND, stateField(KIND, state, 'current'), this.categories));
    this.referenceCount = referenceCount!;
    this.currentCount = currentCount!;
  }
}
