/**
 * Shoal's public API: the package entry. Importing it does nothing but define these names — no
 * registries, timers or sockets.
 */
export type { CheckpointMeta, RunCheckpoint, RunParts, RunState } from './checkpoint/index.js';
export {
  CHECKPOINT_VERSION,
  configFingerprint,
  decodeCheckpoint,
  encodeCheckpoint,
  runCheckpoint,
} from './checkpoint/index.js';
export type {
  ConfigIssue,
  ConfiguredSnapshot,
  Feature,
  FeatureKind,
  FeatureSchema,
  RngState,
  Seed,
  ShoalErrorCode,
  Snapshot,
} from './core/index.js';
export {
  ConfigError,
  checkSnapshot,
  deriveSeed,
  nominal,
  numeric,
  numericSchema,
  Rng,
  ShoalError,
} from './core/index.js';
export type {
  DetectorSnapshot,
  DetectorSpec,
  DriftDetector,
  DriftLevel,
  InputMonitor,
  InputMonitorSpec,
} from './drift/index.js';
export {
  createDetector,
  createInputMonitor,
  DETECTOR_KINDS,
  restoreDetector,
  restoreInputMonitor,
} from './drift/index.js';
export type {
  Ensemble,
  EnsembleKind,
  EnsembleSnapshot,
  EnsembleSpec,
  LifecycleOptions,
  LifecycleSink,
  SeatView,
  VoteKind,
} from './ensembles/index.js';
export {
  BatchVerdicts,
  createEnsemble,
  ENSEMBLE_KINDS,
  RegressionBagging,
  restoreEnsemble,
  Verdict,
} from './ensembles/index.js';
export type { ClassificationFigures, ClassificationView } from './evaluation/index.js';
export { ClassificationEvaluator, RegressionEvaluator, SeatScores } from './evaluation/index.js';
export { createWriter, FileCheckpointStore, readCheckpointFile, readFrames } from './files/index.js';
export type {
  Decoded,
  FeatureSpec,
  Frame,
  FrameOptions,
  FrameWriter,
  LabelsAs,
  Rejection,
} from './frames/index.js';
export { decodeArrowMessage, decodeJsonRecord, FrameDecoder } from './frames/index.js';
export type {
  JournalRecord,
  LifecycleCause,
  LifecycleChange,
  LifecycleRecord,
  MemberState,
  SummaryRecord,
  Task,
} from './journal/index.js';
export { journalLine, LIFECYCLE_CAUSES, parseJournal } from './journal/index.js';
export type {
  Classifier,
  ClassifierSpec,
  LearnerSnapshot,
  Regressor,
  RegressorSpec,
} from './learners/index.js';
export {
  CLASSIFIER_KINDS,
  createClassifier,
  createRegressor,
  REGRESSOR_KINDS,
  restoreClassifier,
  restoreRegressor,
} from './learners/index.js';
export { ParallelBagging, ShardPool } from './parallel/index.js';
export type {
  Clock,
  JournalSink,
  RegressionEnsembleSpec,
  RunConfig,
  ScoreBatch,
  SessionMetrics,
  SessionSnapshot,
  Source,
  SourceBatch,
} from './pipeline/index.js';
export { LearningSession, resolveConfig } from './pipeline/index.js';
export { renderReport } from './report/index.js';
export type { StreamGenerator, StreamRequest } from './streams/index.js';
export { buildStream, STREAM_NAMES } from './streams/index.js';
