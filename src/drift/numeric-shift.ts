import { integerAtLeast, nonNegative, positive, ShoalError, WELFORD_SLOTS } from '../core/index.js';
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
 * const shifts = new NumericShifts(['box_temp', 'door_open_s'], resolveNumericShift('demo', {}));
 * shifts.column(0, values, 0, width, rows, marks, 0, 1); // marks[r·width] |= 1 on a drift at row r
 */
export class NumericShifts {
  private readonly options: NumericShiftOptions;
  /** The Page-Hinkley options each feature's test runs with (two-sided, alarms from the first value). */
  private readonly test: PageHinkleyOptions;
  private readonly testKind: string;
  private readonly state: Float64Array;
  /** The watched features' names, for errors. */
  private readonly names: readonly string[];
  /** A run of values standardised (see `column`). */
  private z = new Float64Array(0);

  /** `names`: the watched features', in order (feature k is names[k]). */
  constructor(names: readonly string[], options: NumericShiftOptions) {
    this.options = options;
    this.names = names;
    const test = new PageHinkley({
      delta: options.delta,
      lambda: options.lambda,
      direction: 'both',
      minCount: 1,
    });
    this.test = test.options;
    this.testKind = test.kind;
    this.state = new Float64Array(names.length * SLOTS);
  }

  /**
   * Feed feature `k` the `rows` values `values[at + i·stride]`; on a drift at value i (after which its
   * statistics restart), `marks[markAt + i·stride] |= bit`. Missing values (NaN) are skipped. The
   * arithmetic is Welford's update (core/running-stats.ts) and the Page-Hinkley step (page-hinkley.ts)
   * written out, but for z = d·√((n − 1)/M2) in place of d/√(M2/(n − 1)): one division fewer on a path
   * bound by the divider, the same value but for the last bit, and the same flags as the definition's
   * on the tests' streams (test/drift/input-monitor.test.ts). The test's running mean moves by
   * (v − x̄)·(1/n), so its division no longer waits for the mean of the value before (a chain of one
   * division a value: the test's pass ran 1.5–1.7× as fast without it, 10 features × 1,000 values).
   * Together the service's model side ran 1.02× as fast (alternated in one process, 5 December).
   *
   * In two passes over the values: first every standardised value (`standardise`), then the test over
   * them (`runTest`); an alarm restarts both from the value after it. The test's two running extremes
   * are updated on most values but not all, a branch the processor cannot predict; in one loop each
   * wrong guess also threw away the square root and divisions of the values after it in flight. Two
   * passes ran 1.20-1.28x as fast as one loop (alternated in one process, 10 features × 2,048 rows);
   * a third pass, the sums apart from their extremes, was slower (0.9x).
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
    if (this.z.length < rows) this.z = new Float64Array(rows);
    const base = k * SLOTS;
    for (let from = 0; from < rows; ) {
      const left = rows - from;
      const refused = this.standardise(base, values, at + from * stride, stride, left);
      const tested = refused < 0 ? left : refused;
      const alarm = this.runTest(base, tested, marks, markAt + from * stride, stride, bit);
      if (alarm >= 0) {
        // The statistics start again after the value that raised the alarm.
        this.state.fill(0, base, base + WELFORD_SLOTS);
        from += alarm + 1;
        continue;
      }
      if (refused >= 0) {
        const x = values[at + (from + refused) * stride]!;
        // Infinite, or the statistics overflowed and its standardised value is not finite.
        if (Number.isFinite(x)) checkFiniteValue(this.testKind, this.z[refused]!);
        throw new ShoalError(
          'invalid-input',
          `${KIND}: feature "${this.names[k]}" got ${x} at value ${from + refused} of those read at once; feature values must be finite`,
        );
      }
      return;
    }
  }

  /**
   * Welford's update of feature `base`'s statistics with `n` values from `values[p]` on, and into `z`
   * each value standardised before it joins them (NaN where there is none: missing, or in the warm-up).
   * Stops at an infinite value, before it joins them, or after a value whose standardised value is not
   * finite (the statistics overflowed): its index (−1 when there was none).
   */
  private standardise(base: number, values: Float64Array, p: number, stride: number, n: number): number {
    const { warmup, clip } = this.options;
    const s = this.state;
    const z = this.z;
    let count = s[base]!;
    let mean = s[base + 1]!;
    let m2 = s[base + 2]!;
    let refused = -1;
    for (let i = 0; i < n; i++, p += stride) {
      const x = values[p]!;
      z[i] = Number.NaN;
      // x − x is 0 for a finite x, NaN for a missing or infinite one.
      if (x - x !== 0) {
        if (Number.isNaN(x)) continue;
        refused = i;
        break;
      }
      if (count < warmup) {
        const total = count + 1;
        const d = x - mean;
        const next = mean + (1 / total) * d;
        count = total;
        mean = next;
        m2 += d * (x - next);
        continue;
      }
      const d = x - mean;
      // A value at the mean is 0 first: with M2 subnormal (n − 1)/M2 overflows, and 0·∞ is NaN.
      let v = d === 0 ? 0 : count > 1 && m2 > 0 ? d * Math.sqrt((count - 1) / m2) : Math.sign(d) * clip;
      if (v > clip) v = clip;
      else if (v < -clip) v = -clip;
      const total = count + 1;
      const next = mean + (1 / total) * d;
      count = total;
      mean = next;
      m2 += d * (x - next);
      z[i] = v;
      if (!Number.isFinite(v)) {
        refused = i;
        break;
      }
    }
    s[base] = count;
    s[base + 1] = mean;
    s[base + 2] = m2;
    return refused;
  }

  /**
   * The Page-Hinkley step of feature `base` on each of the first `n` standardised values (NaN skipped);
   * on an alarm at value i the test starts again, `marks[m + i·stride] |= bit`, and i is returned (−1
   * when there was none).
   */
  private runTest(
    base: number,
    n: number,
    marks: Uint8Array,
    m: number,
    stride: number,
    bit: number,
  ): number {
    const { delta, lambda } = this.test;
    const s = this.state;
    const z = this.z;
    let count = s[base + 3]!;
    let testMean = s[base + 4]!;
    let up = s[base + 5]!;
    let upMin = s[base + 6]!;
    let down = s[base + 7]!;
    let downMax = s[base + 8]!;
    let alarm = -1;
    for (let i = 0; i < n; i++, m += stride) {
      const v = z[i]!;
      if (Number.isNaN(v)) continue;
      testMean += (v - testMean) * (1 / ++count);
      const deviation = v - testMean;
      up = up + deviation - delta;
      if (up < upMin) upMin = up;
      down = down + deviation + delta;
      if (down > downMax) downMax = down;
      if (up - upMin > lambda || downMax - down > lambda) {
        count = testMean = up = upMin = down = downMax = 0;
        marks[m]! |= bit;
        alarm = i;
        break;
      }
    }
    s[base + 3] = count;
    s[base + 4] = testMean;
    s[base + 5] = up;
    s[base + 6] = upMin;
    s[base + 7] = down;
    s[base + 8] = downMax;
    return alarm;
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
