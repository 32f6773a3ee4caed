import { integerAtLeast, nonNegative, positive, WELFORD_SLOTS } from '../core/index.js';
import {
  checkFiniteValue,
  type DetectorSnapshot,
  packScalars,
  stateField,
  unpackScalars,
} from './detector.js';
import { PageHinkley, type PageHinkleyOptions } from './page-hinkley.js';

/**
 * Input drift on one numeric feature: the two-sided Page-Hinkley test (Page 1954; see page-hinkley.ts)
 * on the feature's values standardised online, z = (x − x̄)/s with the running mean and sample standard
 * deviation of the values since the last alarm (Welford 1962), taken before x joins them. The test
 * therefore works in units of standard deviations whatever the feature's scale; it is tuned to catch a
 * shift of 2·`delta` standard deviations.
 *
 * - The first `warmup` values only build the mean and deviation (30 is common practice).
 * - z is clipped to ±`clip` so that one wild reading (a sensor glitch) cannot raise an alarm alone; a
 *   constant feature (s = 0) gives z = 0 for its constant and ±clip for anything else.
 * - δ = 0.5 is the classical CUSUM reference value for a one-standard-deviation shift, half the shift
 *   (Page 1954; common practice). Siegmund's approximation of the mean run length of the test on unit
 *   variance increments with mean Δ, ARL ≈ (e^{−2Δb} + 2Δb − 1)/2Δ² with b = λ + 1.166 (Siegmund,
 *   Sequential Analysis, 1985, from memory), gives for λ = 20: in control (Δ = −δ) about 3·10⁹ values
 *   per side, so a stationary feature practically never alarms; after a 1σ shift (Δ = 1 − δ) about 40.
 * - Missing values (NaN) are skipped.
 * - After an alarm the statistics start again, so the feature adapts to its new regime.
 *
 * Defaults (our choice, from the figures above): δ = 0.5, λ = 20, 30 warm-up values, clip at 5.
 */
export type NumericShiftOptions = {
  /** δ in standard deviations, ≥ 0. */
  readonly delta: number;
  /** λ in standard deviations, > 0. */
  readonly lambda: number;
  /** Values that only build the standardisation before the test starts. */
  readonly warmup: number;
  /** Standardised values are clipped to ±clip. */
  readonly clip: number;
};

export const NUMERIC_SHIFT_DEFAULTS: NumericShiftOptions = { delta: 0.5, lambda: 20, warmup: 30, clip: 5 };

const KIND = 'numeric-shift';

export function resolveNumericShift(
  owner: string,
  options: Partial<NumericShiftOptions>,
): NumericShiftOptions {
  const o = { ...NUMERIC_SHIFT_DEFAULTS, ...options };
  nonNegative(owner, 'numeric.delta', o.delta);
  positive(owner, 'numeric.lambda', o.lambda);
  integerAtLeast(owner, 'numeric.warmup', o.warmup, 2);
  positive(owner, 'numeric.clip', o.clip);
  return { delta: o.delta, lambda: o.lambda, warmup: o.warmup, clip: o.clip };
}

/** Per feature: the Welford triple (count, mean, M2), then the Page-Hinkley state (n, x̄, m, M, m′, M′). */
const SLOTS = WELFORD_SLOTS + 6;

/**
 * The test of every numeric feature of a schema, their states in one column-major buffer so that a
 * column of values runs through one monomorphic loop with the state in locals. Feature `k` here is the
 * k-th watched feature; `column` feeds it values and marks the rows where it drifted.
 *
 * @example
 * const shifts = new NumericShifts(2, resolveNumericShift('demo', {}));
 * shifts.column(0, values, 0, width, rows, marks, 0, 1); // marks[r·width] |= 1 on a drift at row r
 */
export class NumericShifts {
  private readonly options: NumericShiftOptions;
  /** The Page-Hinkley options each feature's test runs with (two-sided, alarms from the first value). */
  private readonly test: PageHinkleyOptions;
  private readonly testKind: string;
  private readonly state: Float64Array;

  constructor(features: number, options: NumericShiftOptions) {
    this.options = options;
    const test = new PageHinkley({
      delta: options.delta,
      lambda: options.lambda,
      direction: 'both',
      minCount: 1,
    });
    this.test = test.options;
    this.testKind = test.kind;
    this.state = new Float64Array(features * SLOTS);
  }

  /**
   * Feed feature `k` the `rows` values `values[at + i·stride]`; on a drift at value i (after which its
   * statistics restart), `marks[markAt + i·stride] |= bit`. Missing values (NaN) are skipped. The
   * arithmetic is Welford's update (core/running-stats.ts) and the Page-Hinkley step (page-hinkley.ts)
   * written out, operation for operation, so the flags are those of the two applied value by value.
   */
  column(
    k: number,
    values: Float64Array,
    at: number,
    stride: number,
    rows: number,
    marks: Uint8Array,
    markAt: number,
    bit: number,
  ): void {
    const { warmup, clip } = this.options;
    const { delta, lambda } = this.test;
    const kind = this.testKind;
    const s = this.state;
    const base = k * SLOTS;
    let count = s[base]!;
    let mean = s[base + 1]!;
    let m2 = s[base + 2]!;
    let n = s[base + 3]!;
    let testMean = s[base + 4]!;
    let up = s[base + 5]!;
    let upMin = s[base + 6]!;
    let down = s[base + 7]!;
    let downMax = s[base + 8]!;
    // A value the test refuses stops the loop; the state up to it is written back before the error.
    let refused = false;
    let z = 0;
    for (let i = 0, p = at, m = markAt; i < rows; i++, p += stride, m += stride) {
      const x = values[p]!;
      if (Number.isNaN(x)) continue;
      if (count < warmup) {
        const total = count + 1;
        const d = x - mean;
        const next = mean + (1 / total) * d;
        count = total;
        mean = next;
        m2 += d * (x - next);
        continue;
      }
      const sd = Math.sqrt(count > 1 ? Math.max(0, m2) / (count - 1) : 0);
      const d = x - mean;
      z = sd > 0 ? d / sd : d === 0 ? 0 : Math.sign(d) * clip;
      if (z > clip) z = clip;
      else if (z < -clip) z = -clip;
      const total = count + 1;
      const next = mean + (1 / total) * d;
      count = total;
      mean = next;
      m2 += d * (x - next);
      if (!Number.isFinite(z)) {
        refused = true;
        break;
      }
      testMean += (z - testMean) / ++n;
      const deviation = z - testMean;
      up = up + deviation - delta;
      if (up < upMin) upMin = up;
      down = down + deviation + delta;
      if (down > downMax) downMax = down;
      if (up - upMin > lambda || downMax - down > lambda) {
        count = mean = m2 = n = testMean = up = upMin = down = downMax = 0;
        marks[m]! |= bit;
      }
    }
    s[base] = count;
    s[base + 1] = mean;
    s[base + 2] = m2;
    s[base + 3] = n;
    s[base + 4] = testMean;
    s[base + 5] = up;
    s[base + 6] = upMin;
    s[base + 7] = down;
    s[base + 8] = downMax;
    if (refused) checkFiniteValue(kind, z);
  }

  reset(): void {
    this.state.fill(0);
  }

  /** Feature `k`'s state: its Welford triple and its Page-Hinkley snapshot. */
  stateOf(k: number): unknown {
    const s = Array.from(this.state.subarray(k * SLOTS, (k + 1) * SLOTS));
    return {
      stats: packScalars(s.slice(0, WELFORD_SLOTS)),
      test: PageHinkley.snapshotOf(this.test, s.slice(WELFORD_SLOTS)),
    };
  }

  load(k: number, state: unknown): void {
    const stats = unpackScalars(KIND, stateField(KIND, state, 'stats'), WELFORD_SLOTS);
    const test = PageHinkley.scalarsOf(stateField(KIND, state, 'test') as DetectorSnapshot);
    this.state.set(stats, k * SLOTS);
    this.state.set(test, k * SLOTS + WELFORD_SLOTS);
  }
}
