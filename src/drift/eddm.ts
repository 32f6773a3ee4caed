import {
  checkSnapshot,
  defaultsOf,
  type OptionsOf,
  type OptionTable,
  requireAbove,
  resolveOptions,
  ShoalError,
  WELFORD_SLOTS,
  welfordAdd,
  welfordVariance,
} from '../core/index.js';
import {
  checkErrorValue,
  type DetectorSnapshot,
  type DriftDetector,
  type DriftLevel,
  type DriftShift,
  LEVEL_CODES,
  packScalars,
  stateField,
  unpackScalars,
} from './detector.js';

/**
 * EDDM — Baena-García, del Campo-Ávila, Fidalgo, Bifet, Gavaldà & Morales-Bueno, "Early drift detection
 * method", 4th International Workshop on Knowledge Discovery from Data Streams, 2006.
 *
 * EDDM watches the distance (in values) between consecutive errors rather than the error rate: while a
 * learner improves, errors grow further apart. It keeps the mean p′ and standard deviation s′ of the
 * distances, remembers (p′ + 2s′)_max, and answers `warning` when (p′ + 2s′)/(p′ + 2s′)_max < α and
 * `drift` when it is < β, once at least 30 errors have been seen; then it restarts from nothing.
 * The level is judged at each error and holds until the next one.
 *
 * Shoal's reading: the maximum is tracked only from the 30th error on (the same gate as the test), so
 * the noisy estimates of the first few distances cannot set a maximum that the stationary stream then
 * falls short of. s′ is the population standard deviation of the distances. The first distance is
 * counted from the last reset. Defaults α = 0.95, β = 0.90, 30 errors (the paper, from memory).
 *
 * @example
 * const eddm = new Eddm();
 * const level = eddm.update(prediction === label ? 0 : 1);
 */
/** EDDM's options (see `OptionTable`). */
export const EDDM_OPTIONS = {
  warningRatio: {
    type: 'number',
    above: 0,
    below: 1,
    default: 0.95,
    doc: 'α: warning when the ratio falls below it',
  },
  driftRatio: {
    type: 'number',
    above: 0,
    below: 1,
    default: 0.9,
    doc: 'β: drift when the ratio falls below it; smaller than warningRatio',
  },
  minErrors: { type: 'integer', atLeast: 1, default: 30, doc: 'errors seen before the levels are judged' },
} as const satisfies OptionTable;

export type EddmOptions = OptionsOf<typeof EDDM_OPTIONS>;

export const EDDM_DEFAULTS: EddmOptions = defaultsOf(EDDM_OPTIONS);

const KIND = 'eddm';
const VERSION = 1;

function resolve(options: Partial<EddmOptions>): EddmOptions {
  const o = resolveOptions(KIND, EDDM_OPTIONS, options);
  requireAbove(KIND, o, 'warningRatio', 'driftRatio');
  return o;
}

export class Eddm implements DriftDetector {
  readonly kind = KIND;
  readonly options: EddmOptions;
  private n = 0;
  private errors = 0;
  private lastError = 0;
  /** Welford triple of the distances between errors. */
  private readonly distances = new Float64Array(WELFORD_SLOTS);
  private maxScore = 0;
  private level: DriftLevel = 'stable';
  /** EDDM alarms when errors come closer together: the error rate rose. */
  shift: DriftShift | null = null;
  alarmEstimate = Number.NaN;

  constructor(options: Partial<EddmOptions> = {}) {
    this.options = resolve(options);
  }

  get count(): number {
    return this.n;
  }

  /** The error rate since the last reset. */
  get estimate(): number {
    return this.n > 0 ? this.errors / this.n : 0;
  }

  update(value: number): DriftLevel {
    checkErrorValue(KIND, value);
    const n = ++this.n;
    if (value === 0) return this.level;
    this.errors++;
    welfordAdd(this.distances, 0, n - this.lastError, 1);
    this.lastError = n;
    if (this.errors < this.options.minErrors) return this.level;
    const score = this.distances[1]! + 2 * Math.sqrt(welfordVariance(this.distances, 0));
    if (score > this.maxScore) this.maxScore = score;
    const ratio = score / this.maxScore;
    if (ratio < this.options.driftRatio) {
      this.shift = 'rise';
      this.alarmEstimate = this.errors / n;
      this.reset();
      return 'drift';
    }
    this.level = ratio < this.options.warningRatio ? 'warning' : 'stable';
    return this.level;
  }

  reset(): void {
    this.n = 0;
    this.errors = 0;
    this.lastError = 0;
    this.distances.fill(0);
    this.maxScore = 0;
    this.level = 'stable';
  }

  snapshot(): DetectorSnapshot {
    const [w, mean, m2] = this.distances;
    return {
      kind: KIND,
      version: VERSION,
      options: { ...this.options },
      state: {
        scalars: packScalars([
          this.n,
          this.errors,
          this.lastError,
          w!,
          mean!,
          m2!,
          this.maxScore,
          LEVEL_CODES.indexOf(this.level),
        ]),
      },
    };
  }

  static restore(snapshot: DetectorSnapshot): Eddm {
    checkSnapshot(snapshot, KIND, VERSION);
    const eddm = new Eddm(snapshot.options as Partial<EddmOptions>);
    const s = unpackScalars(KIND, stateField(KIND, snapshot.state, 'scalars'), 8);
    const level = LEVEL_CODES[s[7]!];
    if (level === undefined) throw new ShoalError('invalid-snapshot', `${KIND} state: level ${s[7]} unknown`);
    eddm.n = s[0]!;
    eddm.errors = s[1]!;
    eddm.lastError = s[2]!;
    eddm.distances.set(s.subarray(3, 6));
    eddm.maxScore = s[6]!;
    eddm.level = level;
    return eddm;
  }
}
