import {
  integerAtLeast,
  nonNegative,
  positive,
  WELFORD_SLOTS,
  welfordAdd,
  welfordSampleVariance,
} from '../core/index.js';
import { type DetectorSnapshot, packScalars, stateField, unpackScalars } from './detector.js';
import { PageHinkley } from './page-hinkley.js';

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

export class NumericShift {
  private readonly options: NumericShiftOptions;
  private readonly stats = new Float64Array(WELFORD_SLOTS);
  private test: PageHinkley;

  constructor(options: NumericShiftOptions) {
    this.options = options;
    this.test = new PageHinkley({
      delta: options.delta,
      lambda: options.lambda,
      direction: 'both',
      minCount: 1,
    });
  }

  /** Feed one value; true when the feature has drifted (the statistics have then restarted). */
  update(value: number): boolean {
    if (Number.isNaN(value)) return false;
    const stats = this.stats;
    if (stats[0]! < this.options.warmup) {
      welfordAdd(stats, 0, value, 1);
      return false;
    }
    const sd = Math.sqrt(welfordSampleVariance(stats, 0));
    const clip = this.options.clip;
    const d = value - stats[1]!;
    let z = sd > 0 ? d / sd : d === 0 ? 0 : Math.sign(d) * clip;
    if (z > clip) z = clip;
    else if (z < -clip) z = -clip;
    welfordAdd(stats, 0, value, 1);
    if (this.test.update(z) !== 'drift') return false;
    stats.fill(0);
    return true;
  }

  reset(): void {
    this.stats.fill(0);
    this.test.reset();
  }

  state(): unknown {
    return { stats: packScalars(Array.from(this.stats)), test: this.test.snapshot() };
  }

  load(state: unknown): void {
    this.stats.set(unpackScalars(KIND, stateField(KIND, state, 'stats'), WELFORD_SLOTS));
    this.test = PageHinkley.restore(stateField(KIND, state, 'test') as DetectorSnapshot);
  }
}
