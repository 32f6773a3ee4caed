export { decodeF32, decodeF64, decodeI32, encodeF32, encodeF64, encodeI32 } from './encoding.js';
export type { ConfigIssue, ConfigIssueCode, ShoalErrorCode, ShoalErrorOptions } from './errors.js';
export { ConfigError, issueLine, ShoalError } from './errors.js';
export type { ChangePoints, Feature, FeatureKind, FeatureSchema } from './features.js';
export { checkSchema, nominal, numeric, numericSchema, readChangePoints } from './features.js';
export {
  argmax,
  entropyBits,
  erfc,
  gini,
  hoeffdingBound,
  hoeffdingCount,
  logGamma,
  normalCdf,
  normalizeInPlace,
  normalLogPdf,
  sigmoid,
  softmaxInPlace,
} from './numeric.js';
export type { OptionSpec, OptionsOf, OptionTable } from './option-table.js';
export {
  checkOptions,
  checkValue,
  defaultsOf,
  describeRange,
  optionConflict,
  requireAbove,
  resolveOptions,
} from './option-table.js';
export {
  closedUnit,
  integerAtLeast,
  nonEmptyList,
  nonNegative,
  oneOf,
  openUnit,
  optionsOf,
  positive,
} from './params.js';
export { PoissonSampler, samplePoisson } from './poisson.js';
export type { RngState, Seed } from './random.js';
export { deriveSeed, Rng } from './random.js';
export type { RunningStatsState } from './running-stats.js';
export {
  RunningStats,
  WELFORD_SLOTS,
  welfordAdd,
  welfordSampleVariance,
  welfordVariance,
} from './running-stats.js';
export type { ConfiguredSnapshot, Snapshot } from './snapshot.js';
export { checkSnapshot } from './snapshot.js';
