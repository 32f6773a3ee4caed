import type { ConfiguredSnapshot, FeatureSchema } from '../core/index.js';
import type { LifecycleSnapshot, SeatView } from './lifecycle.js';
import type { Verdict } from './verdict.js';

export type EnsembleKind = 'bagging' | 'boosting' | 'stacking';
export const ENSEMBLE_KINDS: readonly EnsembleKind[] = ['bagging', 'boosting', 'stacking'];

/**
 * The contract every classification ensemble keeps. Rows are read in place as (buffer, offset), as
 * for learners. `train` judges each member on the row before the member trains on it, which is what
 * the member monitors need when a label arrives late; `scoreTrain` is the prequential step of a
 * replay, scoring and training in one pass.
 *
 * @example
 * const verdict = new Verdict();
 * ensemble.score(rows, i * width, verdict);   // at scoring time
 * ensemble.train(rows, i * width, label);     // when the label arrives
 */
export interface Ensemble {
  readonly kind: EnsembleKind;
  readonly schema: FeatureSchema;
  /** Classes known so far. */
  readonly classes: number;
  /** Seat replacements so far. */
  readonly epoch: number;
  /** Rows trained on so far. */
  readonly rows: number;
  ensureClasses(n: number): void;
  score(row: Float64Array, offset: number, verdict: Verdict): void;
  train(row: Float64Array, offset: number, label: number): void;
  scoreTrain(row: Float64Array, offset: number, label: number, verdict: Verdict): void;
  /** The seats as they are now, for telemetry and reports. */
  seats(): SeatView[];
  sizeBytes(): number;
  snapshot(): EnsembleSnapshot;
}

/**
 * An ensemble's snapshot: the shared envelope, with the schema, settings and seed it was built with, the
 * rows it has learnt and its seats.
 */
export interface EnsembleSnapshot extends ConfiguredSnapshot {
  readonly kind: EnsembleKind;
  readonly schema: FeatureSchema;
  readonly seed: string;
  readonly rows: number;
  readonly lifecycle: LifecycleSnapshot;
  /** Whatever else the kind keeps (Poisson generators, boosting weights, the meta-learner). */
  readonly state: unknown;
}
