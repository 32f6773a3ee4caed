import {
  argmax,
  checkSnapshot,
  defaultsOf,
  type FeatureSchema,
  normalizeInPlace,
  type OptionsOf,
  type OptionTable,
  resolveOptions,
  type Seed,
  sigmoid,
} from '../core/index.js';
import type { LearnerSnapshot } from './learner.js';
import { LinearClassifier } from './linear-classifier.js';

/**
 * The linear SVM's options (see `OptionTable`). λ = 0.01 on standardised inputs: larger than in the
 * Pegasos experiments (1e-4 … 1e-6 on large text sets, from memory) because the step 1/(λt) must settle
 * within thousands of rows of a stream, not millions (common practice, checked on SEA and STAGGER in the
 * tests). Projection on, as in the paper's algorithm.
 */
export const LINEAR_SVM_OPTIONS = {
  lambda: {
    type: 'number',
    above: 0,
    default: 0.01,
    doc: 'λ, the regularisation of the objective (λ/2)‖w‖² + mean hinge loss',
  },
  project: {
    type: 'boolean',
    default: true,
    doc: "apply Pegasos' projection of w onto the ball of radius 1/√λ after each step",
  },
} as const satisfies OptionTable;

export type LinearSvmOptions = OptionsOf<typeof LINEAR_SVM_OPTIONS>;

export const LINEAR_SVM_DEFAULTS: LinearSvmOptions = defaultsOf(LINEAR_SVM_OPTIONS);

const KIND = 'linear-svm';
const VERSION = 1;

function resolve(options: Partial<LinearSvmOptions>): LinearSvmOptions {
  return resolveOptions(KIND, LINEAR_SVM_OPTIONS, options);
}

/**
 * Linear support vector machine trained online by Pegasos — Shalev-Shwartz, Singer & Srebro, "Pegasos:
 * primal estimated sub-gradient solver for SVM", ICML 2007, the single-example form (k = 1) of Fig. 1:
 *   η_t = 1 / (λ t)
 *   w ← (1 − η_t λ) w + η_t · [y (w · x) < 1] · y x
 *   w ← min(1, (1/√λ) / ‖w‖) · w          (optional projection)
 *
 * Multiclass by one-vs-rest: one weight vector per class, each trained on every row with y = +1 for its
 * class and −1 otherwise, all sharing the step counter t. Inputs are encoded by `SparseInput` (online
 * standardisation, one-hot nominal features, a constant input whose weight is the bias, regularised like
 * the others, which is Pegasos' augmented-vector treatment of the bias). A row of weight u counts as u rows
 * in t and scales its step: t ← t + u, the shrink is (1 − u/t) and the hinge step η_t·u.
 *
 * Probabilities: each class's margin m_c = w_c · x is squashed by the logistic function and the results are
 * normalised, p_c ∝ 1/(1 + e^(−m_c)). This is Platt's sigmoid ("Probabilistic outputs for support vector
 * machines", Advances in Large Margin Classifiers, 1999) with its slope fixed at 1 and offset at 0 instead
 * of fitted: a margin of 1 (the edge of the margin band) reads as 0.73. Scores rank well; read them as
 * calibrated probabilities only after checking. The predicted class is the most probable one, which is the
 * largest margin unless two margins both saturate the sigmoid (then the first of them, as the contract asks).
 * No randomness: the seed is accepted for a uniform constructor and unused.
 *
 * @example
 * const svm = new LinearSvm(schema, { lambda: 1e-3 });
 * svm.ensureClasses(2);
 * const predicted = svm.scoreTrain(frame, i * width, label, 1, out, 0);
 */
export class LinearSvm extends LinearClassifier {
  readonly options: LinearSvmOptions;

  constructor(schema: FeatureSchema, options: Partial<LinearSvmOptions> = {}, _seed: Seed = 0) {
    super(KIND, schema, VERSION);
    this.options = resolve(options);
    this.ensureClasses(1);
  }

  static restore(snapshot: LearnerSnapshot): LinearSvm {
    checkSnapshot(snapshot, KIND, VERSION);
    return new LinearSvm(snapshot.schema, snapshot.options as Partial<LinearSvmOptions>).load(snapshot);
  }

  protected predict(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    this.forward(row, offset);
    const classes = this.classes;
    const margins = this.scores;
    for (let c = 0; c < classes; c++) out[outOffset + c] = sigmoid(margins[c]!);
    normalizeInPlace(out, outOffset, classes);
    return argmax(out, outOffset, classes);
  }

  protected learn(row: Float64Array, offset: number, label: number, weight: number, fresh: boolean): void {
    if (!fresh) this.forward(row, offset);
    const { lambda, project } = this.options;
    const map = this.map;
    this.seen += weight;
    const eta = 1 / (lambda * this.seen);
    map.decay(1 - weight / this.seen);
    const step = eta * weight;
    for (let c = 0; c < this.classes; c++) {
      const y = c === label ? 1 : -1;
      if (y * this.scores[c]! < 1) map.add(c, this.input, step * y);
    }
    if (project) {
      const limit = 1 / lambda;
      for (let c = 0; c < this.classes; c++) {
        const n2 = map.normSquared(c);
        if (n2 > limit) map.rescale(c, Math.sqrt(limit / n2));
      }
    }
    this.input.scaler.observe(row, offset, weight);
  }

  /** Encode the row and leave each class's margin in `scores`. */
  private forward(row: Float64Array, offset: number): void {
    this.input.encode(row, offset);
    for (let c = 0; c < this.classes; c++) this.scores[c] = this.map.dot(c, this.input);
  }
}
