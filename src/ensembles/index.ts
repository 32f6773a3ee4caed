export type { BaggingOptions, BaggingSpec } from './bagging.js';
export { BAGGING_DEFAULTS, Bagging } from './bagging.js';
export { BatchVerdicts } from './batch-verdicts.js';
export type { BoostingOptions, BoostingSpec } from './boosting.js';
export { BOOSTING_DEFAULTS, Boosting } from './boosting.js';
export type { Ensemble, EnsembleKind, EnsembleSnapshot } from './ensemble.js';
export { ENSEMBLE_KINDS } from './ensemble.js';
export type {
  LifecycleOptions,
  LifecycleSink,
  LifecycleSnapshot,
  SeatLedger,
  SeatView,
} from './lifecycle.js';
export { inWindow, LIFECYCLE_DEFAULTS, LIFECYCLE_OPTIONS } from './lifecycle.js';
export { proofMargin, provenBetter } from './proof.js';
export type { EnsembleSpec } from './registry.js';
export { createEnsemble, ENSEMBLE_OPTIONS, restoreEnsemble } from './registry.js';
export type { RegressionBaggingOptions, RegressionBaggingSnapshot } from './regression-bagging.js';
export {
  REGRESSION_BAGGING_DEFAULTS,
  REGRESSION_BAGGING_OPTIONS,
  RegressionBagging,
} from './regression-bagging.js';
export type { MetaSpec, StackingOptions, StackingSpec } from './stacking.js';
export { STACKING_DEFAULTS, Stacking } from './stacking.js';
export { Verdict } from './verdict.js';
export type { VoteKind } from './vote.js';
export { combineVotes, type MemberAnswers, VOTE_KINDS } from './vote.js';
