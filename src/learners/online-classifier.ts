import { checkSchema, type FeatureSchema, integerAtLeast, ShoalError } from '../core/index.js';
import {
  type Classifier,
  checkLabel,
  checkOut,
  checkRow,
  checkWeight,
  type LearnerSnapshot,
  MAX_CLASSES,
} from './learner.js';

/**
 * The shared skeleton of Shoal's classifiers: argument checks, class growth and the prequential step,
 * written once so that every learner keeps the contract of `Classifier` the same way.
 *
 * A subclass supplies three routines:
 * - `predict` writes the probabilities of the `classes` known classes and returns the predicted class (the
 *   most probable, the first on ties);
 * - `learn` trains on one row with a weight > 0 and a label below `classes`. When `fresh` is true,
 *   `predict` has just run on this very row with the current model, so whatever it left in the learner's
 *   scratch buffers (an encoded row, margins, hidden activations, probabilities) is valid and may be reused
 *   instead of computed again. `scoreTrain` sets it; `train` does not;
 * - `growClasses` enlarges the per-class tables to `n` classes (the new classes start empty).
 *
 * Semantics kept here (the same as the Hoeffding tree's):
 * - a learner starts knowing one class, class 0: each subclass ends its constructor with
 *   `this.ensureClasses(1)`, once its tables exist; ensembles announce their classes before the first row;
 * - a label beyond the known classes grows them when the learner trains on it; weight 0 leaves the model
 *   unchanged, class count included;
 * - `scoreTrain` scores with the classes known before the row, then trains, exactly as `score` then `train`.
 */
export abstract class OnlineClassifier implements Classifier {
  readonly kind: string;
  readonly schema: FeatureSchema;
  /** Number of features in a row. */
  protected readonly width: number;
  private known = 0;

  protected constructor(kind: string, schema: FeatureSchema) {
    this.kind = kind;
    this.schema = checkSchema(kind, schema);
    this.width = schema.features.length;
  }

  get classes(): number {
    return this.known;
  }

  ensureClasses(n: number): void {
    integerAtLeast(this.kind, 'class count', n, 0);
    if (n > MAX_CLASSES) {
      throw new ShoalError('invalid-parameter', `${this.kind}: at most ${MAX_CLASSES} classes, got ${n}`);
    }
    if (n > this.known) {
      this.growClasses(n);
      this.known = n;
    }
  }

  score(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    checkRow(this.kind, row, offset, this.width);
    checkOut(this.kind, out, outOffset, this.known);
    return this.predict(row, offset, out, outOffset);
  }

  train(row: Float64Array, offset: number, label: number, weight: number): void {
    checkRow(this.kind, row, offset, this.width);
    checkLabel(this.kind, label);
    checkWeight(this.kind, weight);
    if (weight === 0) return;
    if (label >= this.known) this.ensureClasses(label + 1);
    this.learn(row, offset, label, weight, false);
  }

  scoreTrain(
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
    out: Float64Array,
    outOffset: number,
  ): number {
    checkRow(this.kind, row, offset, this.width);
    checkLabel(this.kind, label);
    checkWeight(this.kind, weight);
    checkOut(this.kind, out, outOffset, this.known);
    const predicted = this.predict(row, offset, out, outOffset);
    if (weight === 0) return predicted;
    if (label < this.known) {
      this.learn(row, offset, label, weight, true);
    } else {
      this.ensureClasses(label + 1);
      this.learn(row, offset, label, weight, false);
    }
    return predicted;
  }

  abstract snapshot(): LearnerSnapshot;
  abstract sizeBytes(): number;

  protected abstract predict(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number;
  protected abstract learn(
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
    fresh: boolean,
  ): void;
  protected abstract growClasses(n: number): void;
}
