import {
  checkSchema,
  checkSnapshot,
  decodeF64,
  defaultsOf,
  encodeF64,
  type FeatureSchema,
  resolveOptions,
  type Seed,
  ShoalError,
} from '../core/index.js';
import { checkRow, checkTarget, checkWeight, type LearnerSnapshot, type Regressor } from './learner.js';
import { LINEAR_SGD_OPTIONS, LinearSgd, type LinearSgdOptions } from './linear-regression-sgd.js';

/**
 * `linear-regression`: least-squares linear regression learned online by stochastic gradient
 * descent with an L2 penalty. Numeric features are standardised with their running mean and
 * variance, nominal features are one-hot, missing values (NaN) contribute nothing, which imputes a
 * numeric feature at its running mean. The model, its learning-rate schedule η_t = η₀ / (1 + d·t) and
 * its fixed point (ordinary least squares, or ridge regression for λ > 0) are described in
 * `linear-regression-sgd.ts`.
 *
 * The learner draws no random numbers: the seed is accepted for the constructor shape every learner
 * shares and has no effect.
 *
 * @example
 * const model = new LinearRegression(numericSchema(3), { learningRate: 0.05 });
 * model.train(rows, i * 3, target, 1);
 * const y = model.predict(rows, j * 3);
 */
export type LinearRegressionOptions = LinearSgdOptions;

export const LINEAR_REGRESSION_DEFAULTS: LinearRegressionOptions = defaultsOf(LINEAR_SGD_OPTIONS);

const KIND = 'linear-regression';
const VERSION = 1;

interface LinearRegressionState {
  readonly model: string;
}

export class LinearRegression implements Regressor {
  readonly kind = KIND;
  readonly schema: FeatureSchema;
  readonly options: LinearRegressionOptions;
  private readonly sgd: LinearSgd;
  private readonly state: Float64Array;
  private readonly width: number;

  constructor(schema: FeatureSchema, options: Partial<LinearRegressionOptions> = {}, _seed: Seed = 0) {
    this.schema = checkSchema(KIND, schema);
    this.options = resolveOptions(KIND, LINEAR_SGD_OPTIONS, options);
    this.width = schema.features.length;
    this.sgd = new LinearSgd(schema, this.options);
    this.state = this.sgd.newState();
  }

  predict(row: Float64Array, offset: number): number {
    checkRow(KIND, row, offset, this.width);
    return this.sgd.predict(this.state, row, offset);
  }

  train(row: Float64Array, offset: number, target: number, weight: number): void {
    checkRow(KIND, row, offset, this.width);
    checkTarget(KIND, target);
    checkWeight(KIND, weight);
    if (weight > 0) this.sgd.train(this.state, row, offset, target, weight);
  }

  /**
   * The fitted model in the units of the row: `weights` has one entry per numeric feature and one
   * per category of each nominal feature (in schema order), and ŷ = intercept + Σ weights·inputs.
   */
  coefficients(): { intercept: number; weights: Float64Array } {
    return this.sgd.coefficients(this.state);
  }

  snapshot(): LearnerSnapshot {
    const state: LinearRegressionState = { model: encodeF64(this.state) };
    return { kind: KIND, version: VERSION, schema: this.schema, options: { ...this.options }, state };
  }

  sizeBytes(): number {
    return this.state.byteLength + 8 * 8;
  }

  static restore(snapshot: LearnerSnapshot): LinearRegression {
    checkSnapshot(snapshot, KIND, VERSION);
    const learner = new LinearRegression(
      snapshot.schema,
      snapshot.options as Partial<LinearRegressionOptions>,
    );
    const model = decodeF64(
      (snapshot.state as LinearRegressionState | undefined)?.model as string,
      `${KIND} model`,
    );
    if (model.length !== learner.state.length) {
      throw new ShoalError(
        'invalid-snapshot',
        `${KIND} snapshot: the model holds ${model.length} values, the schema needs ${learner.state.length}`,
      );
    }
    learner.state.set(model);
    return learner;
  }
}
