import {
  argmax,
  checkSnapshot,
  defaultsOf,
  encodeF64,
  type FeatureSchema,
  normalLogPdf,
  type OptionsOf,
  type OptionTable,
  resolveOptions,
  type Seed,
  softmaxInPlace,
  WELFORD_SLOTS,
  welfordAdd,
  welfordVariance,
} from '../core/index.js';
import type { LearnerSnapshot } from './learner.js';
import { isPresent, nominalCode } from './missing.js';
import { OnlineClassifier } from './online-classifier.js';
import { decodeF64Exact, growF64, snapshotNumber } from './typed-arrays.js';

/** Naive Bayes' options (see `OptionTable`). */
export const NAIVE_BAYES_OPTIONS = {
  // P(v | c) = (n_cv + α) / (n_c + α·V); α = 1 is Laplace's rule of succession (common practice).
  laplace: {
    type: 'number',
    above: 0,
    default: 1,
    doc: 'α of the add-α estimate of class priors and nominal value frequencies',
  },
  // Keeps a class that has shown one (or one constant) value from having zero variance; 1e-9 is common practice.
  minVariance: {
    type: 'number',
    above: 0,
    default: 1e-9,
    doc: 'smallest variance of a per-class Gaussian, in squared feature units',
  },
} as const satisfies OptionTable;

export type NaiveBayesOptions = OptionsOf<typeof NAIVE_BAYES_OPTIONS>;

export const NAIVE_BAYES_DEFAULTS: NaiveBayesOptions = defaultsOf(NAIVE_BAYES_OPTIONS);

const KIND = 'naive-bayes';
const VERSION = 1;

function resolve(options: Partial<NaiveBayesOptions>): NaiveBayesOptions {
  return resolveOptions(KIND, NAIVE_BAYES_OPTIONS, options);
}

/**
 * Naive Bayes: P(c | x) ∝ P(c) Πⱼ P(xⱼ | c), features independent given the class.
 *
 * - Numeric features: one Gaussian per class and feature, fitted by maximum likelihood from weighted running
 *   statistics (the weighted Welford update of `src/core`), the form John & Langley call the normal
 *   estimator ("Estimating continuous distributions in Bayesian classifiers", UAI 1995). The variance is the
 *   population (maximum-likelihood) variance, floored at `minVariance`.
 * - Nominal features: Laplace-smoothed frequencies per class, so an unseen value never zeroes a class.
 * - Priors: Laplace-smoothed class weights.
 * - Missing values are skipped: the product runs over the features present in the row. A class that has
 *   never seen feature j present (but other classes have) uses the Gaussian of feature j pooled over all
 *   classes, so a never-observed feature neither favours nor penalises it.
 *
 * Everything is computed in log space and softmaxed at the end. Per-class log terms are cached and only the
 * terms of the trained class are refreshed on each row: ½·log(2πσ²) and 1/(2σ²) per Gaussian, log(n_cv + α)
 * per value, log(n_c + α·V) per feature and log(n_c + α) per class (the prior's common denominator cancels
 * in the softmax). Training on the same rows in any order ends with the same sufficient statistics as a
 * batch fit (up to rounding). No randomness: the seed is accepted for a uniform constructor and unused.
 *
 * @example
 * const nb = new NaiveBayes(schema);
 * nb.ensureClasses(2);
 * const predicted = nb.scoreTrain(frame, i * width, label, 1, out, 0);
 */
export class NaiveBayes extends OnlineClassifier {
  readonly options: NaiveBayesOptions;
  private readonly numericColumns: Int32Array;
  private readonly nominalColumns: Int32Array;
  private readonly nominalValues: Int32Array;
  /** Start of each nominal feature's values in a class's block of value counts. */
  private readonly nominalBase: Int32Array;
  /** Sum of nominal values over features: the length of one class's block of value counts. */
  private readonly nominalSpan: number;
  /** Per class: total training weight. */
  private classWeight: Float64Array = new Float64Array(0);
  /** Per class: log(weight + α). */
  private logPrior: Float64Array = new Float64Array(0);
  /** Per class and numeric feature (class-major): Welford triples. */
  private gauss: Float64Array = new Float64Array(0);
  /** Per class and numeric feature: −½·log(2πσ²). */
  private logNorm: Float64Array = new Float64Array(0);
  /** Per class and numeric feature: 1/(2σ²). */
  private halfPrecision: Float64Array = new Float64Array(0);
  /** Per numeric feature: Welford triple over all classes. */
  private readonly pooled: Float64Array;
  /** Per class and nominal value: weight of rows with that value. */
  private valueWeight: Float64Array = new Float64Array(0);
  /** Per class and nominal value: log(weight + α). */
  private logValue: Float64Array = new Float64Array(0);
  /** Per class and nominal feature: weight of rows where it was present. */
  private featureWeight: Float64Array = new Float64Array(0);
  /** Per class and nominal feature: log(weight + α·V). */
  private logFeature: Float64Array = new Float64Array(0);

  constructor(schema: FeatureSchema, options: Partial<NaiveBayesOptions> = {}, _seed: Seed = 0) {
    super(KIND, schema);
    this.options = resolve(options);
    const numeric: number[] = [];
    const nominal: number[] = [];
    const values: number[] = [];
    const base: number[] = [];
    let span = 0;
    schema.features.forEach((f, i) => {
      if (f.kind === 'numeric') {
        numeric.push(i);
      } else {
        nominal.push(i);
        values.push(f.values);
        base.push(span);
        span += f.values;
      }
    });
    this.numericColumns = Int32Array.from(numeric);
    this.nominalColumns = Int32Array.from(nominal);
    this.nominalValues = Int32Array.from(values);
    this.nominalBase = Int32Array.from(base);
    this.nominalSpan = span;
    this.pooled = new Float64Array(numeric.length * WELFORD_SLOTS);

    this.ensureClasses(1);
  }

  static restore(snapshot: LearnerSnapshot): NaiveBayes {
    checkSnapshot(snapshot, KIND, VERSION);
    const state = (snapshot.state ?? {}) as Record<string, unknown>;
    const nb = new NaiveBayes(snapshot.schema, snapshot.options as Partial<NaiveBayesOptions>);
    const classes = snapshotNumber(state.classes, 'naive-bayes classes');
    nb.ensureClasses(classes);
    const numeric = nb.numericColumns.length;
    nb.classWeight.set(decodeF64Exact(state.classWeight, classes, 'class weights'));
    nb.gauss.set(decodeF64Exact(state.gauss, classes * numeric * WELFORD_SLOTS, 'Gaussian statistics'));
    nb.pooled.set(decodeF64Exact(state.pooled, numeric * WELFORD_SLOTS, 'pooled statistics'));
    nb.valueWeight.set(decodeF64Exact(state.valueWeight, classes * nb.nominalSpan, 'value weights'));
    nb.featureWeight.set(
      decodeF64Exact(state.featureWeight, classes * nb.nominalColumns.length, 'feature weights'),
    );
    for (let c = 0; c < classes; c++) nb.refreshClass(c);
    return nb;
  }

  snapshot(): LearnerSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      schema: this.schema,
      options: { ...this.options },
      state: {
        classes: this.classes,
        classWeight: encodeF64(this.classWeight),
        gauss: encodeF64(this.gauss),
        pooled: encodeF64(this.pooled),
        valueWeight: encodeF64(this.valueWeight),
        featureWeight: encodeF64(this.featureWeight),
      },
    };
  }

  sizeBytes(): number {
    return (
      this.classWeight.byteLength +
      this.logPrior.byteLength +
      this.gauss.byteLength +
      this.logNorm.byteLength +
      this.halfPrecision.byteLength +
      this.pooled.byteLength +
      this.valueWeight.byteLength +
      this.logValue.byteLength +
      this.featureWeight.byteLength +
      this.logFeature.byteLength +
      4 * (this.numericColumns.length + 3 * this.nominalColumns.length)
    );
  }

  protected predict(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    const classes = this.classes;
    const { numericColumns, nominalColumns, nominalValues, nominalBase, nominalSpan } = this;
    const { gauss, logNorm, halfPrecision, logValue, logFeature, logPrior } = this;
    const numeric = numericColumns.length;
    const nominal = nominalColumns.length;
    for (let c = 0; c < classes; c++) {
      let s = logPrior[c]!;
      const g = c * numeric;
      for (let j = 0; j < numeric; j++) {
        const x = row[offset + numericColumns[j]!]!;
        if (!isPresent(x)) continue;
        const k = g + j;
        if (gauss[k * WELFORD_SLOTS]! > 0) {
          const d = x - gauss[k * WELFORD_SLOTS + 1]!;
          s += logNorm[k]! - d * d * halfPrecision[k]!;
        } else {
          s += this.pooledLogDensity(j, x);
        }
      }
      const v = c * nominalSpan;
      const f = c * nominal;
      for (let j = 0; j < nominal; j++) {
        const code = nominalCode(row[offset + nominalColumns[j]!]!, nominalValues[j]!);
        if (code < 0) continue;
        s += logValue[v + nominalBase[j]! + code]! - logFeature[f + j]!;
      }
      out[outOffset + c] = s;
    }
    softmaxInPlace(out, outOffset, classes);
    return argmax(out, outOffset, classes);
  }

  protected learn(row: Float64Array, offset: number, label: number, weight: number): void {
    const { numericColumns, nominalColumns, nominalValues, nominalBase, gauss, pooled } = this;
    const alpha = this.options.laplace;
    this.classWeight[label]! += weight;
    this.logPrior[label] = Math.log(this.classWeight[label]! + alpha);
    const numeric = numericColumns.length;
    for (let j = 0; j < numeric; j++) {
      const x = row[offset + numericColumns[j]!]!;
      if (!isPresent(x)) continue;
      const k = label * numeric + j;
      welfordAdd(gauss, k * WELFORD_SLOTS, x, weight);
      welfordAdd(pooled, j * WELFORD_SLOTS, x, weight);
      this.refreshGaussian(k);
    }
    const nominal = nominalColumns.length;
    for (let j = 0; j < nominal; j++) {
      const code = nominalCode(row[offset + nominalColumns[j]!]!, nominalValues[j]!);
      if (code < 0) continue;
      const v = label * this.nominalSpan + nominalBase[j]! + code;
      this.valueWeight[v]! += weight;
      this.logValue[v] = Math.log(this.valueWeight[v]! + alpha);
      const f = label * nominal + j;
      this.featureWeight[f]! += weight;
      this.logFeature[f] = Math.log(this.featureWeight[f]! + alpha * nominalValues[j]!);
    }
  }

  protected growClasses(n: number): void {
    const numeric = this.numericColumns.length;
    const nominal = this.nominalColumns.length;
    const from = this.classes;
    this.classWeight = growF64(this.classWeight, n);
    this.logPrior = growF64(this.logPrior, n);
    this.gauss = growF64(this.gauss, n * numeric * WELFORD_SLOTS);
    this.logNorm = growF64(this.logNorm, n * numeric);
    this.halfPrecision = growF64(this.halfPrecision, n * numeric);
    this.valueWeight = growF64(this.valueWeight, n * this.nominalSpan);
    this.logValue = growF64(this.logValue, n * this.nominalSpan);
    this.featureWeight = growF64(this.featureWeight, n * nominal);
    this.logFeature = growF64(this.logFeature, n * nominal);
    for (let c = from; c < n; c++) this.refreshClass(c);
  }

  /** Recompute every cached log term of class c from its statistics. */
  private refreshClass(c: number): void {
    const alpha = this.options.laplace;
    const numeric = this.numericColumns.length;
    const nominal = this.nominalColumns.length;
    this.logPrior[c] = Math.log(this.classWeight[c]! + alpha);
    for (let j = 0; j < numeric; j++) this.refreshGaussian(c * numeric + j);
    for (let i = c * this.nominalSpan; i < (c + 1) * this.nominalSpan; i++) {
      this.logValue[i] = Math.log(this.valueWeight[i]! + alpha);
    }
    for (let j = 0; j < nominal; j++) {
      const f = c * nominal + j;
      this.logFeature[f] = Math.log(this.featureWeight[f]! + alpha * this.nominalValues[j]!);
    }
  }

  private refreshGaussian(k: number): void {
    const variance = Math.max(welfordVariance(this.gauss, k * WELFORD_SLOTS), this.options.minVariance);
    this.logNorm[k] = -0.5 * Math.log(2 * Math.PI * variance);
    this.halfPrecision[k] = 0.5 / variance;
  }

  /** log N(x; pooled mean, pooled variance) of numeric feature j, or 0 if it was never observed. */
  private pooledLogDensity(j: number, x: number): number {
    const at = j * WELFORD_SLOTS;
    if (!(this.pooled[at]! > 0)) return 0;
    const variance = Math.max(welfordVariance(this.pooled, at), this.options.minVariance);
    return normalLogPdf(x, this.pooled[at + 1]!, variance);
  }
}
