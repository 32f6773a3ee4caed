export type { EvaluationConfig, InputsConfig, RunConfig } from './config.js';
export { DEFAULT_SEED, resolveConfig } from './config.js';
export type { LoopOptions, RowBatch } from './loop.js';
export { LearningLoop } from './loop.js';
export type {
  CheckpointStore,
  Clock,
  DeadLetter,
  DeadLetterSink,
  DriftSignal,
  JournalSink,
  LabelSource,
  Positions,
  ScoreBatch,
  ScoreSink,
  SessionMetrics,
  Source,
  SourceBatch,
  StoredCheckpoint,
} from './ports.js';
