import {
  checkSnapshot,
  defaultsOf,
  type OptionsOf,
  type OptionTable,
  resolveOptions,
} from '../core/index.js';
import {
  checkFiniteValue,
  type DetectorSnapshot,
  type DriftDetector,
  type DriftLevel,
  type DriftShift,
  packScalars,
  stateField,
  unpackScalars,
} from './detector.js';

/**
 * Page-Hinkley test — Page, "Continuous inspection schemes", Biometrika 41(1/2), 1954, in the form
 * used for drift detection: with x̄_T the mean of the values so far,
 *
 *   increase:  m_T = Σ_{t≤T} (x_t − x̄_t − δ),  M_T = min_{t≤T} m_t,  alarm when m_T − M_T > λ
 *   decrease:  m′_T = Σ_{t≤T} (x_t − x̄_t + δ), M′_T = max_{t≤T} m′_t, alarm when M′_T − m′_T > λ
 *
 * (the minimum and maximum include the empty sum m₀ = 0, which makes m_T − M_T Page's CUSUM statistic
 * against the running mean). δ is the magnitude of change tolerated, λ the alarm threshold.
 * `direction` picks the increase test, the decrease test or both. An optional fading factor α < 1
 * weighs the past down, m_T = α·m_{T−1} + (x_T − x̄_T − δ) (Gama, Sebastião & Rodrigues, "On evaluating
 * stream learning algorithms", Machine Learning 90, 2013, from memory). The test has no warning level.
 * After `drift` the detector has restarted from nothing.
 *
 * Defaults: δ = 0.005, λ = 50 (common practice), increase only (an error rate that rises), no fading,
 * no alarm before 30 values (common practice).
 *
 * @example
 * const ph = new PageHinkley({ direction: 'both', delta: 0.5, lambda: 20 });
 * if (ph.update(reading) === 'drift') alert();
 */
export type PageHinkleyDirection = 'increase' | 'decrease' | 'both';

/** Page-Hinkley's options (see `OptionTable`). */
export const PAGE_HINKLEY_OPTIONS = {
  delta: { type: 'number', atLeast: 0, default: 0.005, doc: 'δ, the change tolerated' },
  lambda: { type: 'number', above: 0, default: 50, doc: 'λ, the alarm threshold' },
  direction: {
    type: 'choice',
    choices: ['increase', 'decrease', 'both'],
    default: 'increase',
    doc: 'which changes of the mean raise an alarm',
  },
  fading: { type: 'number', above: 0, atMost: 1, default: 1, doc: 'fading factor α; 1 keeps the plain sum' },
  minCount: { type: 'integer', atLeast: 1, default: 30, doc: 'values seen before an alarm can be raised' },
} as const satisfies OptionTable;

export type PageHinkleyOptions = OptionsOf<typeof PAGE_HINKLEY_OPTIONS>;

export const PAGE_HINKLEY_DEFAULTS: PageHinkleyOptions = defaultsOf(PAGE_HINKLEY_OPTIONS);

const KIND = 'page-hinkley';
const VERSION = 1;

function resolve(options: Partial<PageHinkleyOptions>): PageHinkleyOptions {
  return resolveOptions(KIND, PAGE_HINKLEY_OPTIONS, options);
}

export class PageHinkley implements DriftDetector {
  readonly kind = KIND;
  readonly options: PageHinkleyOptions;
  private readonly watchIncrease: boolean;
  private readonly watchDecrease: boolean;
  private n = 0;
  private mean = 0;
  private up = 0;
  private upMin = 0;
  private down = 0;
  private downMax = 0;
  /** Which test alarmed: the increase test says `rise`, the decrease test `fall`. */
  shift: DriftShift | null = null;
  alarmEstimate = Number.NaN;

  constructor(options: Partial<PageHinkleyOptions> = {}) {
    this.options = resolve(options);
    this.watchIncrease = this.options.direction !== 'decrease';
    this.watchDecrease = this.options.direction !== 'increase';
  }

  get count(): number {
    return this.n;
  }

  /** The mean x̄ of the values since the last reset (the error rate for 0/1 errors). */
  get estimate(): number {
    return this.mean;
  }

  /** The larger of the two test statistics m_T − M_T and M′_T − m′_T watched by `direction`. */
  get statistic(): number {
    const up = this.watchIncrease ? this.up - this.upMin : 0;
    const down = this.watchDecrease ? this.downMax - this.down : 0;
    return Math.max(up, down);
  }

  update(value: number): DriftLevel {
    checkFiniteValue(KIND, value);
    const { delta, fading, lambda } = this.options;
    const n = ++this.n;
    // By the reciprocal, so that the next value's step does not wait for a division (see numeric-shift.ts).
    this.mean += (value - this.mean) * (1 / n);
    const deviation = value - this.mean;
    this.up = fading * this.up + deviation - delta;
    if (this.up < this.upMin) this.upMin = this.up;
    this.down = fading * this.down + deviation + delta;
    if (this.down > this.downMax) this.downMax = this.down;
    if (n < this.options.minCount) return 'stable';
    const rose = this.watchIncrease && this.up - this.upMin > lambda;
    if (rose || (this.watchDecrease && this.downMax - this.down > lambda)) {
      this.shift = rose ? 'rise' : 'fall';
      this.alarmEstimate = this.mean;
      this.reset();
      return 'drift';
    }
    return 'stable';
  }

  reset(): void {
    this.n = 0;
    this.mean = 0;
    this.up = 0;
    this.upMin = 0;
    this.down = 0;
    this.downMax = 0;
  }

  snapshot(): DetectorSnapshot {
    return PageHinkley.snapshotOf(this.options, [
      this.n,
      this.mean,
      this.up,
      this.upMin,
      this.down,
      this.downMax,
    ]);
  }

  /**
   * The snapshot of a test with these options whose state is `scalars`: n, x̄, m, M, m′, M′ (the
   * input monitor keeps many tests' state in columns and writes each one's snapshot through this).
   */
  static snapshotOf(options: PageHinkleyOptions, scalars: readonly number[]): DetectorSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      options: { ...options },
      state: { scalars: packScalars(scalars) },
    };
  }

  /** The state of a snapshot as `snapshotOf` takes it, after checking its kind, version and length. */
  static scalarsOf(snapshot: DetectorSnapshot): Float64Array {
    checkSnapshot(snapshot, KIND, VERSION);
    return unpackScalars(KIND, stateField(KIND, snapshot.state, 'scalars'), 6);
  }

  static restore(snapshot: DetectorSnapshot): PageHinkley {
    const s = PageHinkley.scalarsOf(snapshot);
    const ph = new PageHinkley(snapshot.options as Partial<PageHinkleyOptions>);
    ph.n = s[0]!;
    ph.mean = s[1]!;
    ph.up = s[2]!;
    ph.upMin = s[3]!;
    ph.down = s[4]!;
    ph.downMax = s[5]!;
    return ph;
  }
}
