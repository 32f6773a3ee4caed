import type { FeatureSchema } from '../core/index.js';
import type { ForgetsInputs, LearnerSnapshot } from './learner.js';
import { LinearMap } from './linear-map.js';
import { OnlineClassifier } from './online-classifier.js';
import { SparseInput } from './sparse-input.js';
import { growF64, snapshotNumber } from './typed-arrays.js';

/**
 * What the linear classifiers (logistic regression, the linear SVM) share: a row encoded by
 * `SparseInput` (numeric features standardised online, nominal one-hot, a bias), one weight vector per
 * class in a `LinearMap`, the training weight seen so far (the t of their step sizes), a per-class
 * score of the last row, and the snapshot that holds all of it.
 */
export abstract class LinearClassifier extends OnlineClassifier implements ForgetsInputs {
  abstract readonly options: object;
  protected readonly input: SparseInput;
  protected readonly map: LinearMap;
  /** Training weight seen so far. */
  protected seen = 0;
  /** Per-class scores of the last encoded row (probabilities or margins). */
  protected scores: Float64Array = new Float64Array(0);
  private readonly version: number;

  protected constructor(kind: string, schema: FeatureSchema, version: number) {
    super(kind, schema);
    this.version = version;
    this.input = new SparseInput(schema);
    this.map = new LinearMap(this.input.dimension);
  }

  snapshot(): LearnerSnapshot {
    return {
      kind: this.kind,
      version: this.version,
      schema: this.schema,
      options: { ...this.options } as Record<string, unknown>,
      state: {
        classes: this.classes,
        seen: this.seen,
        scaler: this.input.scaler.state(),
        weights: this.map.state(),
      },
    };
  }

  sizeBytes(): number {
    return this.input.sizeBytes() + this.map.sizeBytes() + this.scores.byteLength;
  }

  forgetInputs(first: number, count: number): void {
    for (let f = first; f < first + count; f++) {
      const [start, end] = this.input.inputsOf(f);
      this.map.zeroInputs(start, end);
    }
  }

  protected growClasses(n: number): void {
    this.map.grow(n);
    this.scores = growF64(this.scores, n);
  }

  /** Load the state written by `snapshot` into a learner built with the same schema and options. */
  protected load(snapshot: LearnerSnapshot): this {
    const state = (snapshot.state ?? {}) as Record<string, unknown>;
    this.ensureClasses(snapshotNumber(state.classes, `${this.kind} classes`));
    this.seen = snapshotNumber(state.seen, `${this.kind} training weight`);
    this.input.scaler.load(state.scaler);
    this.map.load((state.weights ?? {}) as Record<string, unknown>);
    return this;
  }
}
