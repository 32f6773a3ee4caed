import { type FeatureSchema, type OptionTable, type Seed, ShoalError } from '../core/index.js';
import { BAGGING_OPTIONS, Bagging, type BaggingSpec } from './bagging.js';
import { BOOSTING_OPTIONS, Boosting, type BoostingSpec } from './boosting.js';
import { ENSEMBLE_KINDS, type Ensemble, type EnsembleKind, type EnsembleSnapshot } from './ensemble.js';
import type { LifecycleSink } from './lifecycle.js';
import { STACKING_OPTIONS, Stacking, type StackingSpec } from './stacking.js';

/** Each ensemble's scalar option table, by kind (learners, meta and lifecycle are specs of their own). */
export const ENSEMBLE_OPTIONS: Readonly<Record<EnsembleKind, OptionTable>> = {
  bagging: BAGGING_OPTIONS,
  boosting: BOOSTING_OPTIONS,
  stacking: STACKING_OPTIONS,
};

/** An ensemble as configuration describes it. */
export type EnsembleSpec =
  | ({ readonly kind: 'bagging' } & BaggingSpec)
  | ({ readonly kind: 'boosting' } & BoostingSpec)
  | ({ readonly kind: 'stacking' } & StackingSpec);

/**
 * Build an ensemble from its spec. Every random choice derives from `seed`; lifecycle records go to
 * `journal`.
 *
 * @example
 * const ensemble = createEnsemble({ kind: 'bagging', members: 10 }, schema, 7, (r) => journal.write(r));
 */
export function createEnsemble(
  spec: EnsembleSpec,
  schema: FeatureSchema,
  seed: Seed,
  journal?: LifecycleSink,
): Ensemble {
  const { kind, ...options } = spec ?? ({} as EnsembleSpec);
  switch (kind) {
    case 'bagging':
      return new Bagging(schema, options, seed, journal);
    case 'boosting':
      return new Boosting(schema, options, seed, journal);
    case 'stacking':
      return new Stacking(schema, options, seed, journal);
    default:
      throw new ShoalError(
        'invalid-parameter',
        `ensemble kind must be one of ${ENSEMBLE_KINDS.join(', ')}, got ${String(kind)}`,
      );
  }
}

/** Rebuild an ensemble from a snapshot; it continues exactly where the original was. */
export function restoreEnsemble(snapshot: EnsembleSnapshot, journal?: LifecycleSink): Ensemble {
  switch (snapshot?.kind) {
    case 'bagging':
      return Bagging.restore(snapshot, journal);
    case 'boosting':
      return Boosting.restore(snapshot, journal);
    case 'stacking':
      return Stacking.restore(snapshot, journal);
    default:
      throw new ShoalError(
        'invalid-snapshot',
        `unknown ensemble kind in snapshot: ${String(snapshot?.kind)}`,
      );
  }
}
