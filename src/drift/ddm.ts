import {
  checkSnapshot,
  defaultsOf,
  type OptionsOf,
  type OptionTable,
  requireAbove,
  resolveOptions,
} from '../core/index.js';
import {
  checkErrorValue,
  type DetectorSnapshot,
  type DriftDetector,
  type DriftLevel,
  type DriftShift,
  packScalars,
  stateField,
  unpackScalars,
} from './detector.js';

/**
 * DDM — Gama, Medas, Castillo & Rodrigues, "Learning with drift detection", SBIA 2004.
 *
 * The errors of a learner form a Bernoulli sequence. After i values the error rate is pᵢ with standard
 * deviation sᵢ = √(pᵢ(1 − pᵢ)/i). DDM keeps p_min and s_min at the point where pᵢ + sᵢ was smallest and
 * answers `warning` when pᵢ + sᵢ ≥ p_min + 2·s_min and `drift` when pᵢ + sᵢ ≥ p_min + 3·s_min; it
 * judges only after 30 values. After `drift` the detector has restarted: the paper relearns the concept
 * from the values since the warning, so its statistics begin again from nothing.
 *
 * Defaults from the paper (from memory): 30 values before judging, factors 2 and 3. A learner that has
 * made no error yet has p_min = s_min = 0, so its first error is a drift — the paper's rule as written.
 *
 * @example
 * const ddm = new Ddm();
 * if (ddm.update(error) === 'warning') startUnderstudy();
 */
/** DDM's options (see `OptionTable`). */
export const DDM_OPTIONS = {
  minCount: { type: 'integer', atLeast: 1, default: 30, doc: 'values seen before the levels are judged' },
  warningFactor: { type: 'number', above: 0, default: 2, doc: 'warning at p_min + warningFactor · s_min' },
  driftFactor: {
    type: 'number',
    above: 0,
    default: 3,
    doc: 'drift at p_min + driftFactor · s_min; larger than warningFactor',
  },
} as const satisfies OptionTable;

export type DdmOptions = OptionsOf<typeof DDM_OPTIONS>;

export const DDM_DEFAULTS: DdmOptions = defaultsOf(DDM_OPTIONS);

const KIND = 'ddm';
const VERSION = 1;

function resolve(options: Partial<DdmOptions>): DdmOptions {
  const o = resolveOptions(KIND, DDM_OPTIONS, options);
  requireAbove(KIND, o, 'driftFactor', 'warningFactor');
  return o;
}

export class Ddm implements DriftDetector {
  readonly kind = KIND;
  readonly options: DdmOptions;
  private n = 0;
  private errors = 0;
  private pMin = Number.POSITIVE_INFINITY;
  private sMin = Number.POSITIVE_INFINITY;
  /** DDM's test is one-sided: it alarms only when the error rate rose. */
  shift: DriftShift | null = null;
  alarmEstimate = Number.NaN;

  constructor(options: Partial<DdmOptions> = {}) {
    this.options = resolve(options);
  }

  get count(): number {
    return this.n;
  }

  /** The error rate pᵢ since the last reset. */
  get estimate(): number {
    return this.n > 0 ? this.errors / this.n : 0;
  }

  /** p_min + warningFactor · s_min: the warning level pᵢ + sᵢ is compared with. */
  get warningThreshold(): number {
    return this.pMin + this.options.warningFactor * this.sMin;
  }

  /** p_min + driftFactor · s_min: the drift level pᵢ + sᵢ is compared with. */
  get driftThreshold(): number {
    return this.pMin + this.options.driftFactor * this.sMin;
  }

  update(value: number): DriftLevel {
    checkErrorValue(KIND, value);
    const n = ++this.n;
    this.errors += value;
    if (n < this.options.minCount) return 'stable';
    const p = this.errors / n;
    const s = Math.sqrt((p * (1 - p)) / n);
    if (p + s < this.pMin + this.sMin) {
      this.pMin = p;
      this.sMin = s;
    }
    if (p + s > this.driftThreshold) {
      this.shift = 'rise';
      this.alarmEstimate = p;
      this.reset();
      return 'drift';
    }
    return p + s > this.warningThreshold ? 'warning' : 'stable';
  }

  reset(): void {
    this.n = 0;
    this.errors = 0;
    this.pMin = Number.POSITIVE_INFINITY;
    this.sMin = Number.POSITIVE_INFINITY;
  }

  snapshot(): DetectorSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      options: { ...this.options },
      state: { scalars: packScalars([this.n, this.errors, this.pMin, this.sMin]) },
    };
  }

  static restore(snapshot: DetectorSnapshot): Ddm {
    checkSnapshot(snapshot, KIND, VERSION);
    const ddm = new Ddm(snapshot.options as Partial<DdmOptions>);
    const [n, errors, pMin, sMin] = unpackScalars(KIND, stateField(KIND, snapshot.state, 'scalars'), 4);
    ddm.n = n!;
    ddm.errors = errors!;
    ddm.pMin = pMin!;
    ddm.sMin = sMin!;
    return ddm;
  }
}
