import {
  checkSnapshot,
  defaultsOf,
  type OptionsOf,
  type OptionTable,
  requireAbove,
  resolveOptions,
} from '../core/index.js';
import {
  checkUnitValue,
  type DetectorSnapshot,
  type DriftDetector,
  type DriftLevel,
  type DriftShift,
  packScalars,
  stateField,
  unpackScalars,
} from './detector.js';

/**
 * HDDM_A — Frías-Blanco, del Campo-Ávila, Ramos-Jiménez, Morales-Bueno, Ortiz-Díaz & Caballero-Mota,
 * "Online and non-parametric drift detection methods based on Hoeffding's bounds", IEEE TKDE 27(3),
 * 2015: the test on moving averages (A-test), one-sided, for a mean that rises (an error rate).
 *
 * Values lie in [0, 1]. Z̄ is the mean of all n values since the last reset. The detector keeps a cut
 * point: the prefix of n_cut values whose Hoeffding upper bound X̄_cut + ε(n_cut) is the smallest seen,
 * with ε(k) = √(ln(1/α_D)/2k). By Hoeffding's inequality for the weighted sum Z̄ − X̄_cut (weights
 * 1/n − 1/n_cut on the prefix and 1/n after it, Σcᵢ² = (n − n_cut)/(n·n_cut)),
 *
 *   P(Z̄ − X̄_cut − E[Z̄ − X̄_cut] ≥ ε) ≤ exp(−2ε²·n·n_cut/(n − n_cut)),
 *
 * so with ε_α = √((n − n_cut)/(2·n·n_cut) · ln(1/α)) the detector answers `drift` when
 * Z̄ − X̄_cut ≥ ε_{α_D} and `warning` when Z̄ − X̄_cut ≥ ε_{α_W}. After `drift` it restarts from nothing.
 *
 * Defaults (the paper, from memory): drift significance α_D = 0.001, warning significance α_W = 0.005;
 * the options are named after these symbols (`alphaD`, `alphaW`).
 *
 * @example
 * const hddm = new HddmA();
 * const level = hddm.update(error);
 */
/** HDDM_A's options (see `OptionTable`), named after the paper's symbols. */
export const HDDM_A_OPTIONS = {
  alphaD: {
    type: 'number',
    above: 0,
    below: 1,
    default: 0.001,
    doc: 'α_D, the significance level of the drift test',
  },
  alphaW: {
    type: 'number',
    above: 0,
    below: 1,
    default: 0.005,
    doc: 'α_W, the significance level of the warning test, larger than alphaD',
  },
} as const satisfies OptionTable;

export type HddmAOptions = OptionsOf<typeof HDDM_A_OPTIONS>;

export const HDDM_A_DEFAULTS: HddmAOptions = defaultsOf(HDDM_A_OPTIONS);

const KIND = 'hddm-a';
const VERSION = 1;

function resolve(options: Partial<HddmAOptions>): HddmAOptions {
  const o = resolveOptions(KIND, HDDM_A_OPTIONS, options);
  requireAbove(KIND, o, 'alphaW', 'alphaD');
  return o;
}

export class HddmA implements DriftDetector {
  readonly kind = KIND;
  readonly options: HddmAOptions;
  /** ln(1/α_D) and ln(1/α_W), fixed at construction. */
  private readonly logDrift: number;
  private readonly logWarning: number;
  private n = 0;
  private total = 0;
  private prefixCount = 0;
  private prefixTotal = 0;
  /** The A-test here is one-sided: it alarms only when the mean rose above the cut point's. */
  shift: DriftShift | null = null;
  alarmEstimate = Number.NaN;

  constructor(options: Partial<HddmAOptions> = {}) {
    this.options = resolve(options);
    this.logDrift = Math.log(1 / this.options.alphaD);
    this.logWarning = Math.log(1 / this.options.alphaW);
  }

  get count(): number {
    return this.n;
  }

  /** Z̄, the mean since the last reset (the error rate for 0/1 errors). */
  get estimate(): number {
    return this.n > 0 ? this.total / this.n : 0;
  }

  /** n_cut, the length of the prefix the test compares against (0 before the first value). */
  get cutCount(): number {
    return this.prefixCount;
  }

  /** X̄_cut, the mean of that prefix. */
  get cutMean(): number {
    return this.prefixCount > 0 ? this.prefixTotal / this.prefixCount : 0;
  }

  update(value: number): DriftLevel {
    checkUnitValue(KIND, value);
    const n = ++this.n;
    this.total += value;
    const mean = this.total / n;
    const log = this.logDrift;
    if (
      this.prefixCount === 0 ||
      mean + Math.sqrt(log / (2 * n)) <=
        this.prefixTotal / this.prefixCount + Math.sqrt(log / (2 * this.prefixCount))
    ) {
      this.prefixCount = n;
      this.prefixTotal = this.total;
      return 'stable';
    }
    const diff = mean - this.prefixTotal / this.prefixCount;
    const spread = (n - this.prefixCount) / (2 * n * this.prefixCount);
    if (diff >= Math.sqrt(spread * log)) {
      this.shift = 'rise';
      this.alarmEstimate = mean;
      this.reset();
      return 'drift';
    }
    return diff >= Math.sqrt(spread * this.logWarning) ? 'warning' : 'stable';
  }

  reset(): void {
    this.n = 0;
    this.total = 0;
    this.prefixCount = 0;
    this.prefixTotal = 0;
  }

  snapshot(): DetectorSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      options: { ...this.options },
      state: { scalars: packScalars([this.n, this.total, this.prefixCount, this.prefixTotal]) },
    };
  }

  static restore(snapshot: DetectorSnapshot): HddmA {
    checkSnapshot(snapshot, KIND, VERSION);
    const hddm = new HddmA(snapshot.options as Partial<HddmAOptions>);
    const s = unpackScalars(KIND, stateField(KIND, snapshot.state, 'scalars'), 4);
    hddm.n = s[0]!;
    hddm.total = s[1]!;
    hddm.prefixCount = s[2]!;
    hddm.prefixTotal = s[3]!;
    return hddm;
  }
}
