export { parseJournal } from './parser.js';
export type {
  InputDriftRecord,
  JournalRecord,
  LabelCounts,
  LifecycleCause,
  LifecycleChange,
  LifecycleRecord,
  MemberState,
  RunRecord,
  SummaryRecord,
  ViewFigures,
  WindowRecord,
} from './records.js';
export { isDriftSignal, JOURNAL_VERSION, LIFECYCLE_CAUSES, MEMBER_STATES } from './records.js';
export { journalLine } from './writer.js';
