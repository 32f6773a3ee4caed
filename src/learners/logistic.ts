import {
  argmax,
  checkSnapshot,
  defaultsOf,
  type FeatureSchema,
  type OptionsOf,
  type OptionTable,
  resolveOptions,
  type Seed,
  softmaxInPlace,
} from '../core/index.js';
import type { LearnerSnapshot } from './learner.js';
import { LinearClassifier } from './linear-classifier.js';

/**
 * Logistic regression's options (see `OptionTable`). η₀ = 0.1 and d = 0.01 on standardised inputs: the
 * step halves after 100 rows and then falls like 10/t, the 1/t decay of stochastic approximation
 * (Robbins & Monro, Ann. Math. Statist. 22, 1951) that lets the weights settle near the batch fit;
 * λ = 1e-4 only keeps the weights bounded on separable data. Common practice, checked against a batch
 * fit on SEA in the tests. Set d = 0 for a constant step that keeps tracking a drifting stream.
 */
export const LOGISTIC_OPTIONS = {
  learningRate: { type: 'number', above: 0, default: 0.1, doc: 'η₀, the step size of the first row' },
  rateDecay: {
    type: 'number',
    atLeast: 0,
    default: 0.01,
    doc: 'd in η_t = η₀ / (1 + d·t), t = training weight seen; 0 keeps the step constant',
  },
  l2: { type: 'number', atLeast: 0, default: 1e-4, doc: 'λ, the L2 penalty (λ/2)‖w‖² per row' },
} as const satisfies OptionTable;

export type LogisticOptions = OptionsOf<typeof LOGISTIC_OPTIONS>;

export const LOGISTIC_DEFAULTS: LogisticOptions = defaultsOf(LOGISTIC_OPTIONS);

const KIND = 'logistic';
const VERSION = 1;

function resolve(options: Partial<LogisticOptions>): LogisticOptions {
  return resolveOptions(KIND, LOGISTIC_OPTIONS, options);
}

/**
 * Multinomial logistic regression trained by stochastic gradient descent on the L2-regularised log loss.
 *
 * Model: P(c | x) = softmax(w_c · x)_c, one weight vector per class over the encoded row (numeric
 * features standardised online, nominal features one-hot, a constant input for the bias — see
 * `SparseInput`). The bias is an ordinary weight and shares the penalty; with λ = 1e-4 its pull is
 * negligible.
 *
 * Step for a row (x, y) with weight u, t = training weight seen before it (the schedule Bottou recommends,
 * "Stochastic gradient descent tricks", Neural Networks: Tricks of the Trade, 2012, from memory — the same
 * form as `linear-regression`):
 *   η_t = η₀ / (1 + d t)
 *   w_c ← (1 − η_t λ u) w_c − η_t u (p_c − [c = y]) x     for every class c,
 * the gradient of u·(−log p_y + (λ/2)‖w‖²). The shrink is one multiplication per class (`LinearMap`), the
 * gradient touches only the row's active inputs. A class that appears later starts with zero weights.
 * No randomness: the seed is accepted for a uniform constructor and unused.
 *
 * @example
 * const lr = new Logistic(schema, { learningRate: 0.05 });
 * lr.ensureClasses(2);
 * const predicted = lr.scoreTrain(frame, i * width, label, 1, out, 0);
 */
export class Logistic extends LinearClassifier {
  readonly options: LogisticOptions;

  constructor(schema: FeatureSchema, options: Partial<LogisticOptions> = {}, _seed: Seed = 0) {
    super(KIND, schema, VERSION);
    this.options = resolve(options);
    this.ensureClasses(1);
  }

  static restore(snapshot: LearnerSnapshot): Logistic {
    checkSnapshot(snapshot, KIND, VERSION);
    return new Logistic(snapshot.schema, snapshot.options as Partial<LogisticOptions>).load(snapshot);
  }

  protected predict(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    this.forward(row, offset);
    const classes = this.classes;
    for (let c = 0; c < classes; c++) out[outOffset + c] = this.scores[c]!;
    return argmax(out, outOffset, classes);
  }

  protected learn(row: Float64Array, offset: number, label: number, weight: number, fresh: boolean): void {
    if (!fresh) this.forward(row, offset);
    const { learningRate, rateDecay, l2 } = this.options;
    const eta = learningRate / (1 + rateDecay * this.seen);
    this.map.decay(Math.max(0, 1 - eta * l2 * weight));
    const step = eta * weight;
    for (let c = 0; c < this.classes; c++) {
      const g = this.scores[c]! - (c === label ? 1 : 0);
      if (g !== 0) this.map.add(c, this.input, -step * g);
    }
    this.seen += weight;
    this.input.scaler.observe(row, offset, weight);
  }

  /** Encode the row and leave its class probabilities in `scores`. */
  private forward(row: Float64Array, offset: number): void {
    this.input.encode(row, offset);
    const classes = this.classes;
    for (let c = 0; c < classes; c++) this.scores[c] = this.map.dot(c, this.input);
    softmaxInPlace(this.scores, 0, classes);
  }
}
