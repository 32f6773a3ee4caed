export type { EvaluationConfig, InputsConfig, RunConfig } from './config.js';
export { DEFAULT_SEED, resolveConfig } from './config.js';
export type {
  InputDriftRecord,
  JournalRecord,
  RunRecord,
  SummaryRecord,
  ViewFigures,
  WindowRecord,
} from './journal.js';
export type { LoopOptions, RowBatch, VerdictSink } from './loop.js';
export { LearningLoop } from './loop.js';
