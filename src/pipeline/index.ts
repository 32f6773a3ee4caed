export { EventClock, liveClock } from './clocks.js';
export type {
  CheckpointCadence,
  EvaluationConfig,
  InputsConfig,
  LabelsConfig,
  RegressionEnsembleSpec,
  RunConfig,
} from './config.js';
export {
  CHECKPOINT_CADENCE_OPTIONS,
  DEFAULT_SEED,
  LABELS_DEFAULTS,
  modelConfig,
  resolveConfig,
} from './config.js';
export type {
  CheckpointStore,
  Clock,
  DeadLetter,
  DeadLetterSink,
  DriftSignal,
  EnsembleThreads,
  JournalSink,
  LabelSource,
  Positions,
  ScoreBatch,
  ScoreSink,
  SessionMetrics,
  Source,
  SourceBatch,
  StoredCheckpoint,
  ThreadedEnsemble,
  Timer,
} from './ports.js';
export type { SessionCounts, SessionOptions, SessionSnapshot } from './session.js';
export { LABEL_DELAY_BOUNDS, LearningSession } from './session.js';
export type { Scorecard, SessionModel, SessionModelSnapshot } from './task.js';
export { restoreModel, restoreScorecard } from './task.js';
