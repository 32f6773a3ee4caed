import type { ConfiguredSnapshot, FeatureSchema } from '../core/index.js';
import { ShoalError } from '../core/index.js';

/**
 * The one contract every classifier in Shoal keeps.
 *
 * A row is read in place as (buffer, offset): `schema.features.length` doubles starting at `offset`.
 * Labels are class codes 0, 1, 2, …; a label the learner has not seen grows its class count, so classes
 * may appear over time. Nothing here allocates per row: probabilities are written into a buffer the
 * caller owns and reuses.
 *
 * @example
 * const out = new Float64Array(8);
 * const predicted = learner.scoreTrain(frame, i * width, label, 1, out, 0); // test, then train
 */
export interface Classifier {
  /** The learner's kind, as in configuration (`hoeffding-tree`, `naive-bayes`, …). */
  readonly kind: string;
  readonly schema: FeatureSchema;
  /** Classes known so far: one more than the largest label seen or announced. */
  readonly classes: number;
  /** Announce that labels 0 … n−1 exist (never shrinks the class count). */
  ensureClasses(n: number): void;
  /**
   * Write the probability of each known class into out[outOffset … outOffset + classes − 1] and
   * return the predicted class (the most probable; the first on ties).
   */
  score(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number;
  /** Learn from one labelled row with a weight ≥ 0 (0 leaves the model unchanged). */
  train(row: Float64Array, offset: number, label: number, weight: number): void;
  /**
   * Score the row, then train on it: the prequential step in one pass. Equivalent to `score` followed
   * by `train`, so the returned prediction never saw the label.
   */
  scoreTrain(
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
    out: Float64Array,
    outOffset: number,
  ): number;
  /** Everything needed to rebuild the learner exactly, JSON-safe. */
  snapshot(): LearnerSnapshot;
  /** Approximate bytes held by the model's state. */
  sizeBytes(): number;
}

/** The one contract every regressor keeps; rows are read as for classifiers. */
export interface Regressor {
  readonly kind: string;
  readonly schema: FeatureSchema;
  predict(row: Float64Array, offset: number): number;
  train(row: Float64Array, offset: number, target: number, weight: number): void;
  snapshot(): LearnerSnapshot;
  sizeBytes(): number;
}

/**
 * A learner that can forget what it learnt from some of its input features: stacking uses it to stop
 * trusting a replaced member's outputs (its meta-learner's weights on that seat's inputs restart at 0).
 */
export interface ForgetsInputs {
  /** Reset the weights on features first … first + count − 1 of the schema. */
  forgetInputs(first: number, count: number): void;
}

/** A learner's snapshot: the shared envelope, with the schema and settings it was built with. */
export interface LearnerSnapshot extends ConfiguredSnapshot {
  readonly schema: FeatureSchema;
}

/** Labels above this are refused: a label is a class code, not an arbitrary number. */
export const MAX_CLASSES = 4096;

/**
 * Check a (buffer, offset) row reference and its values; the message is built only on failure. NaN marks
 * a missing value and passes; an infinite value is refused, since one would turn a leaf's mean and
 * variance into NaN for good (the decoders refuse it in frames and files; this is the library's door).
 * One sum tells: it is finite unless a value is NaN or infinite (or finite values overflow it), and
 * only then are the values looked at one by one.
 */
export function checkRow(owner: string, row: Float64Array, offset: number, width: number): void {
  if (!(offset >= 0 && Number.isInteger(offset) && offset + width <= row.length)) {
    throw new ShoalError(
      'invalid-row',
      `${owner}: a row needs ${width} values at offset ${offset}, but the buffer holds ${row.length}`,
    );
  }
  let sum = 0;
  for (let j = 0; j < width; j++) sum += row[offset + j]!;
  if (sum - sum !== 0) refuseInfinite(owner, row, offset, width);
}

function refuseInfinite(owner: string, row: Float64Array, offset: number, width: number): void {
  for (let j = 0; j < width; j++) {
    const v = row[offset + j]!;
    if (v === Number.POSITIVE_INFINITY || v === Number.NEGATIVE_INFINITY) {
      throw new ShoalError(
        'invalid-row',
        `${owner}: feature ${j} of the row at offset ${offset} is ${v}; feature values must be finite (NaN marks a missing value)`,
      );
    }
  }
}

/** Check a class label: an integer code in [0, MAX_CLASSES). */
export function checkLabel(owner: string, label: number): void {
  if (!(Number.isInteger(label) && label >= 0 && label < MAX_CLASSES)) {
    throw new ShoalError(
      'invalid-label',
      `${owner}: label must be an integer class code in [0, ${MAX_CLASSES}), got ${label}`,
    );
  }
}

/** Check a regression target: a finite number. */
export function checkTarget(owner: string, target: number): void {
  if (!Number.isFinite(target)) {
    throw new ShoalError('invalid-label', `${owner}: target must be a finite number, got ${target}`);
  }
}

/** Check a training weight: a finite number ≥ 0. */
export function checkWeight(owner: string, weight: number): void {
  if (!(weight >= 0 && Number.isFinite(weight))) {
    throw new ShoalError('invalid-weight', `${owner}: weight must be a finite number ≥ 0, got ${weight}`);
  }
}

/** Check that the caller's output buffer has room for `classes` probabilities. */
export function checkOut(owner: string, out: Float64Array, outOffset: number, classes: number): void {
  if (!(outOffset >= 0 && outOffset + classes <= out.length)) {
    throw new ShoalError(
      'invalid-parameter',
      `${owner}: the output buffer needs ${classes} slots at offset ${outOffset}, but holds ${out.length}`,
    );
  }
}
