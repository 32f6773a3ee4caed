import {
  argmax,
  checkSnapshot,
  defaultsOf,
  encodeF64,
  type FeatureSchema,
  type OptionsOf,
  type OptionTable,
  Rng,
  resolveOptions,
  type Seed,
  softmaxInPlace,
} from '../core/index.js';
import type { ForgetsInputs, LearnerSnapshot } from './learner.js';
import { OnlineClassifier } from './online-classifier.js';
import { SparseInput } from './sparse-input.js';
import { decodeF64Exact, growF64, snapshotNumber } from './typed-arrays.js';

/**
 * The MLP's options (see `OptionTable`). 16 tanh units and η = 0.02: common practice for a small network
 * on standardised inputs, checked on SEA, STAGGER and LED in the tests. The step stays constant so the
 * network keeps tracking a drifting stream.
 */
export const MLP_OPTIONS = {
  hidden: { type: 'integer', atLeast: 1, default: 16, doc: 'units in the hidden layer' },
  learningRate: { type: 'number', above: 0, default: 0.02, doc: 'η, the constant step of gradient descent' },
} as const satisfies OptionTable;

export type MlpOptions = OptionsOf<typeof MLP_OPTIONS>;

export const MLP_DEFAULTS: MlpOptions = defaultsOf(MLP_OPTIONS);

const KIND = 'mlp';
const VERSION = 1;

function resolve(options: Partial<MlpOptions>): MlpOptions {
  return resolveOptions(KIND, MLP_OPTIONS, options);
}

/**
 * A multilayer perceptron with one hidden layer, trained by back-propagation one row at a time (Rumelhart,
 * Hinton & Williams, "Learning representations by back-propagating errors", Nature 323, 1986):
 *   h = tanh(W₁ x)           x the encoded row of `SparseInput` (standardised numeric features, one-hot
 *                            nominal features, a constant 1 whose weights are the hidden biases)
 *   p = softmax(W₂ [h; 1])   one output per class
 * Loss −u·log p_y for a row of weight u; gradients δ_c = p_c − [c = y] at the outputs and
 * δ_h = (1 − h²) Σ_c W₂[c,h] δ_c at the hidden units; every weight moves by −η·u·gradient.
 *
 * Initialisation follows LeCun, Bottou, Orr & Müller ("Efficient BackProp", Neural Networks: Tricks of the
 * Trade, 1998, from memory): tanh units on standardised inputs, input weights drawn from N(0, 1/m) with m
 * the number of inputs active in a row (features + 1), from the seeded generator. Output weights start at 0,
 * so every class — including one that appears later — starts from the uniform distribution; the random
 * input weights already break the symmetry between hidden units.
 *
 * Used as the stacking meta-learner (its inputs are the members' probabilities) and as a base learner.
 *
 * @example
 * const net = new Mlp(schema, { hidden: 8 }, 42);
 * net.ensureClasses(3);
 * const predicted = net.scoreTrain(frame, i * width, label, 1, out, 0);
 */
export class Mlp extends OnlineClassifier implements ForgetsInputs {
  readonly options: MlpOptions;
  private readonly input: SparseInput;
  /** Input-to-hidden weights, input-major: dimension × hidden, so a sparse row reads whole rows. */
  private readonly inner: Float64Array;
  /** Hidden-to-output weights, class-major: classes × (hidden + 1), the last column the output bias. */
  private outer: Float64Array = new Float64Array(0);
  /** Hidden activations of the last scored row. */
  private readonly activation: Float64Array;
  /** Back-propagated error at the hidden units. */
  private readonly delta: Float64Array;
  /** Output probabilities of the last scored row. */
  private probs: Float64Array = new Float64Array(0);

  constructor(schema: FeatureSchema, options: Partial<MlpOptions> = {}, seed: Seed = 0) {
    super(KIND, schema);
    this.options = resolve(options);
    this.input = new SparseInput(schema);
    const hidden = this.options.hidden;
    this.inner = new Float64Array(this.input.dimension * hidden);
    const rng = new Rng(seed);
    const sd = 1 / Math.sqrt(this.width + 1);
    for (let i = 0; i < this.inner.length; i++) this.inner[i] = sd * rng.normal();
    this.activation = new Float64Array(hidden);
    this.delta = new Float64Array(hidden);

    this.ensureClasses(1);
  }

  static restore(snapshot: LearnerSnapshot): Mlp {
    checkSnapshot(snapshot, KIND, VERSION);
    const state = (snapshot.state ?? {}) as Record<string, unknown>;
    const net = new Mlp(snapshot.schema, snapshot.options as Partial<MlpOptions>);
    const classes = snapshotNumber(state.classes, 'mlp classes');
    net.ensureClasses(classes);
    net.input.scaler.load(state.scaler);
    net.inner.set(decodeF64Exact(state.inner, net.inner.length, 'mlp input weights'));
    net.outer.set(decodeF64Exact(state.outer, net.outer.length, 'mlp output weights'));
    return net;
  }

  snapshot(): LearnerSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      schema: this.schema,
      options: { ...this.options },
      state: {
        classes: this.classes,
        scaler: this.input.scaler.state(),
        inner: encodeF64(this.inner),
        outer: encodeF64(this.outer),
      },
    };
  }

  sizeBytes(): number {
    return (
      this.input.sizeBytes() +
      this.inner.byteLength +
      this.outer.byteLength +
      this.activation.byteLength +
      this.delta.byteLength +
      this.probs.byteLength
    );
  }

  /** Zero the input-to-hidden weights of the given features; back-propagation grows them again. */
  forgetInputs(first: number, count: number): void {
    const hidden = this.options.hidden;
    for (let f = first; f < first + count; f++) {
      const [start, end] = this.input.inputsOf(f);
      this.inner.fill(0, start * hidden, end * hidden);
    }
  }

  protected predict(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    this.forward(row, offset);
    const classes = this.classes;
    for (let c = 0; c < classes; c++) out[outOffset + c] = this.probs[c]!;
    return argmax(out, outOffset, classes);
  }

  protected learn(row: Float64Array, offset: number, label: number, weight: number, fresh: boolean): void {
    if (!fresh) this.forward(row, offset);
    const { inner, outer, activation, delta, probs, input } = this;
    const hidden = this.options.hidden;
    const stride = hidden + 1;
    const step = this.options.learningRate * weight;
    delta.fill(0);
    for (let c = 0; c < this.classes; c++) {
      const g = probs[c]! - (c === label ? 1 : 0);
      if (g === 0) continue;
      const base = c * stride;
      const move = step * g;
      for (let h = 0; h < hidden; h++) {
        delta[h]! += outer[base + h]! * g;
        outer[base + h]! -= move * activation[h]!;
      }
      outer[base + hidden]! -= move;
    }
    for (let h = 0; h < hidden; h++) {
      const a = activation[h]!;
      delta[h]! *= step * (1 - a * a);
    }
    const { index, value, size } = input;
    for (let k = 0; k < size; k++) {
      const base = index[k]! * hidden;
      const x = value[k]!;
      for (let h = 0; h < hidden; h++) inner[base + h]! -= delta[h]! * x;
    }
    input.scaler.observe(row, offset, weight);
  }

  protected growClasses(n: number): void {
    this.outer = growF64(this.outer, n * (this.options.hidden + 1));
    this.probs = growF64(this.probs, n);
  }

  /** Encode the row, leave the hidden activations in `activation` and the probabilities in `probs`. */
  private forward(row: Float64Array, offset: number): void {
    const { inner, outer, activation, probs, input } = this;
    const hidden = this.options.hidden;
    input.encode(row, offset);
    activation.fill(0);
    const { index, value, size } = input;
    for (let k = 0; k < size; k++) {
      const base = index[k]! * hidden;
      const x = value[k]!;
      for (let h = 0; h < hidden; h++) activation[h]! += inner[base + h]! * x;
    }
    for (let h = 0; h < hidden; h++) activation[h] = Math.tanh(activation[h]!);
    const stride = hidden + 1;
    for (let c = 0; c < this.classes; c++) {
      const base = c * stride;
      let s = outer[base + hidden]!;
      for (let h = 0; h < hidden; h++) s += outer[base + h]! * activation[h]!;
      probs[c] = s;
    }
    softmaxInPlace(probs, 0, this.classes);
  }
}
