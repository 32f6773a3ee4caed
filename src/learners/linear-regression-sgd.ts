import {
  type FeatureSchema,
  type OptionsOf,
  type OptionTable,
  welfordAdd,
  welfordVariance,
} from '../core/index.js';
import { isPresent, nominalCode } from './missing.js';

/**
 * The online linear model shared by `linear-regression` and the linear leaves of
 * `hoeffding-regression-tree`: squared loss, stochastic gradient descent, an L2 penalty, inputs
 * standardised online.
 *
 * Model. ŷ = ȳ + Σₖ θₖ (xₖ − x̄ₖ) + Σ (weight of each nominal feature's category), where ȳ and x̄ₖ are
 * the running (weighted) means of the target and of numeric feature k (West 1979, see
 * `core/running-stats`) and a nominal feature enters one-hot. A missing value — NaN or ±∞ for a numeric
 * feature, anything but a valid code for a nominal one — contributes nothing, which for a numeric
 * feature is imputation at its running mean. The inputs being centred, the running target mean is the
 * intercept; the slopes are penalised, the intercept is not.
 *
 * Standardisation. Steps are taken in the coordinates zₖ = (xₖ − x̄ₖ)/sₖ (sₖ the running population
 * standard deviation), where every numeric input has unit scale, so one rate suits features of any
 * scale: a step Δβₖ on the standardised slope βₖ = θₖ·sₖ is applied as Δθₖ = Δβₖ/sₖ. The weights are
 * kept in the units of the row, so the model's function does not move when the running scale does;
 * only the steps are rescaled. (Keeping β instead would let the late drift of sₖ bias the fit, by
 * about β·(relative drift of s), which the small late steps cannot undo.)
 *
 * Objective and fixed point. Each row of weight w is a step on J(β) = ½ E[(y − ŷ)²] + ½ λ‖β‖², so
 * with a decaying rate the standardised slopes settle where (E[zzᵀ] + λI) β = E[z (y − ȳ)]: ordinary
 * least squares for λ = 0, ridge regression on the standardised inputs (Hoerl & Kennard,
 * Technometrics 12, 1970) for λ > 0.
 *
 * Step. The rate is η_t = η₀ / (1 + d·t), t = total weight trained before the row — the schedule
 * Bottou recommends for SGD ("Stochastic gradient descent tricks", Neural Networks: Tricks of the
 * Trade, 2012, from memory), constant for d = 0. It is divided by m, the number of features,
 * which is E‖z‖² when every feature is present, so η₀ reads as "the share of the residual one row
 * removes" whatever the width. The squared-loss part of the step is the importance-weight-aware
 * update of Karampatziakis & Langford ("Online importance weight aware updates", UAI 2011,
 * from memory): Δβ = r · (1 − e^(−η w ‖z‖²/m)) / ‖z‖² · z with residual r — the limit of w tiny steps,
 * so a large weight (a Poisson draw, a boosting weight) never overshoots the row's target. The
 * penalty part is the exact flow of its gradient over the same step: β ← β · e^(−η w λ/m).
 *
 * State. One `Float64Array` per model, so a tree leaf's model is one allocation and a snapshot is
 * one encoded array: [clock t, target (weight, mean, M2), weights (θ of each numeric feature, then
 * one per category of each nominal feature), (weight, mean, M2) of each numeric feature].
 */

/**
 * Options of the online linear model (also the linear leaves of the regression tree); see
 * `OptionTable`. Defaults: η₀ = 0.1 removes a tenth of a row's residual, a common-practice starting
 * rate for normalised LMS; d = 1e-3 halves the rate after 1,000 rows and keeps it decaying like 1/t
 * after that (common practice); no penalty by default (common practice for a model that sees many rows).
 */
export const LINEAR_SGD_OPTIONS = {
  learningRate: {
    type: 'number',
    above: 0,
    default: 0.1,
    doc: 'η₀, the step at t = 0 on the normalised scale',
  },
  rateDecay: {
    type: 'number',
    atLeast: 0,
    default: 1e-3,
    doc: 'd in η_t = η₀ / (1 + d·t), t = total weight trained; 0 keeps the rate constant',
  },
  l2: {
    type: 'number',
    atLeast: 0,
    default: 0,
    doc: 'λ, the L2 penalty on the weights of the standardised inputs',
  },
} as const satisfies OptionTable;

export type LinearSgdOptions = OptionsOf<typeof LINEAR_SGD_OPTIONS>;

/** Slot of the schedule clock t in a model's state. */
export const CLOCK = 0;
/** First slot of the target's (weight, mean, M2) triple in a model's state. */
export const TARGET = 1;
/** Slots before the weights: the clock and the target triple. */
export const HEAD = 4;

/** What a tree leaf needs from its model: a state of a fixed length, a prediction and a step. */
export interface LeafModel {
  readonly stateLength: number;
  predict(state: Float64Array, row: Float64Array, offset: number): number;
  train(state: Float64Array, row: Float64Array, offset: number, target: number, weight: number): void;
}

/**
 * The layout and the arithmetic of one kind of linear model, decided once per schema; the state
 * lives in caller-owned `Float64Array`s (one per model).
 *
 * @example
 * const sgd = new LinearSgd(schema, defaultsOf(LINEAR_SGD_OPTIONS));
 * const state = sgd.newState();
 * sgd.train(state, rows, i * width, target, 1);
 * const y = sgd.predict(state, rows, j * width);
 */
export class LinearSgd implements LeafModel {
  /** Number of weights: one per numeric feature plus one per category of each nominal feature. */
  readonly inputs: number;
  readonly stateLength: number;
  private readonly numericColumns: Int32Array;
  private readonly nominalColumns: Int32Array;
  private readonly nominalValues: Int32Array;
  /** Slot of the first category weight of each nominal feature. */
  private readonly nominalSlots: Int32Array;
  /** Slot of the first numeric feature triple. */
  private readonly statsStart: number;
  /** m, the normaliser of the step: the number of features. */
  private readonly norm: number;
  private readonly eta0: number;
  private readonly decay: number;
  private readonly l2: number;
  /** ‖z‖² of the last row `score` saw (a field, not a return value, so that nothing is allocated). */
  private lastNormSq = 0;

  constructor(schema: FeatureSchema, options: LinearSgdOptions) {
    const numericColumns: number[] = [];
    const nominalColumns: number[] = [];
    const nominalValues: number[] = [];
    schema.features.forEach((f, i) => {
      if (f.kind === 'numeric') numericColumns.push(i);
      else {
        nominalColumns.push(i);
        nominalValues.push(f.values);
      }
    });
    this.numericColumns = Int32Array.from(numericColumns);
    this.nominalColumns = Int32Array.from(nominalColumns);
    this.nominalValues = Int32Array.from(nominalValues);
    this.nominalSlots = new Int32Array(nominalColumns.length);
    let slot = HEAD + numericColumns.length;
    for (let j = 0; j < nominalColumns.length; j++) {
      this.nominalSlots[j] = slot;
      slot += nominalValues[j]!;
    }
    this.inputs = slot - HEAD;
    this.statsStart = slot;
    this.stateLength = slot + 3 * numericColumns.length;
    this.norm = schema.features.length;
    this.eta0 = options.learningRate;
    this.decay = options.rateDecay;
    this.l2 = options.l2;
  }

  /** A fresh state: no rows seen, all weights 0. */
  newState(): Float64Array {
    return new Float64Array(this.stateLength);
  }

  /** The prediction for the row at `offset`; allocates nothing. */
  predict(state: Float64Array, row: Float64Array, offset: number): number {
    return this.score(state, row, offset);
  }

  /** One step on a row with target `target` and weight `weight` > 0; allocates nothing. */
  train(state: Float64Array, row: Float64Array, offset: number, target: number, weight: number): void {
    welfordAdd(state, TARGET, target, weight);
    const numeric = this.numericColumns;
    for (let k = 0; k < numeric.length; k++) {
      const x = row[offset + numeric[k]!]!;
      if (isPresent(x)) welfordAdd(state, this.statsStart + 3 * k, x, weight);
    }
    const eta = this.eta0 / (1 + this.decay * state[CLOCK]!);
    const stepScale = (eta * weight) / this.norm;
    if (this.l2 > 0) {
      const shrink = Math.exp(-stepScale * this.l2);
      const end = HEAD + this.inputs;
      for (let i = HEAD; i < end; i++) state[i]! *= shrink;
    }
    const residual = target - this.score(state, row, offset);
    const normSq = this.lastNormSq;
    if (normSq > 0) this.step(state, row, offset, (residual * -Math.expm1(-stepScale * normSq)) / normSq);
    state[CLOCK]! += weight;
  }

  /**
   * The model in the units of the row: `weights[k]` multiplies input slot k (a numeric feature's raw
   * value, or 1 for a nominal feature's category), and `intercept` is what is left of ȳ once the
   * running means are folded in. For reading the model, not for the hot path.
   */
  coefficients(state: Float64Array): { intercept: number; weights: Float64Array } {
    const weights = state.slice(HEAD, HEAD + this.inputs);
    let intercept = state[TARGET + 1]!;
    for (let k = 0; k < this.numericColumns.length; k++) {
      intercept -= weights[k]! * state[this.statsStart + 3 * k + 1]!;
    }
    return { intercept, weights };
  }

  /** ȳ + Σ θ (x − x̄) + Σ category weights, leaving ‖z‖² in `lastNormSq`. */
  private score(state: Float64Array, row: Float64Array, offset: number): number {
    let y = state[TARGET + 1]!;
    let normSq = 0;
    const numeric = this.numericColumns;
    for (let k = 0; k < numeric.length; k++) {
      const x = row[offset + numeric[k]!]!;
      if (!isPresent(x)) continue;
      const s = this.statsStart + 3 * k;
      const centred = x - state[s + 1]!;
      y += state[HEAD + k]! * centred;
      const variance = welfordVariance(state, s);
      if (variance > 0) normSq += (centred * centred) / variance;
    }
    const nominal = this.nominalColumns;
    for (let j = 0; j < nominal.length; j++) {
      const c = row[offset + nominal[j]!]!;
      if (nominalCode(c, this.nominalValues[j]!) >= 0) {
        y += state[this.nominalSlots[j]! + c]!;
        normSq += 1;
      }
    }
    this.lastNormSq = normSq;
    return y;
  }

  /** The standardised step Δβ = factor · z, applied to the weights in row units (Δθ = Δβ / s). */
  private step(state: Float64Array, row: Float64Array, offset: number, factor: number): void {
    const numeric = this.numericColumns;
    for (let k = 0; k < numeric.length; k++) {
      const x = row[offset + numeric[k]!]!;
      if (!isPresent(x)) continue;
      const s = this.statsStart + 3 * k;
      const variance = welfordVariance(state, s);
      if (variance > 0) state[HEAD + k]! += (factor * (x - state[s + 1]!)) / variance;
    }
    const nominal = this.nominalColumns;
    for (let j = 0; j < nominal.length; j++) {
      const c = row[offset + nominal[j]!]!;
      if (nominalCode(c, this.nominalValues[j]!) >= 0) state[this.nominalSlots[j]! + c]! += factor;
    }
  }
}
