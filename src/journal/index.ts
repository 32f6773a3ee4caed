export { parseJournal } from './parser.js';
export type {
  InputDriftCause,
  InputDriftRecord,
  JournalRecord,
  LabelCounts,
  LifecycleCause,
  LifecycleChange,
  LifecycleRecord,
  MemberState,
  ProofRecord,
  RunRecord,
  SummaryRecord,
  Task,
  ViewFigures,
  WindowRecord,
} from './records.js';
export {
  INPUT_DRIFT_CAUSES,
  isDriftSignal,
  JOURNAL_VERSION,
  LIFECYCLE_CAUSES,
  MEMBER_STATES,
  TASKS,
} from './records.js';
export { journalLine } from './writer.js';
