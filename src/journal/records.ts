import type { ChangePoints, FeatureSchema } from '../core/index.js';

/**
 * The journal of a run: one JSON object per line (NDJSON), in the order things happened. It is the
 * audit trail of every member change and the input of `shoal report`. Every record placed in the
 * stream carries two counts, because with late labels they differ: `scored` (rows scored so far) and
 * `trained` (rows the ensemble has trained on so far). A reader picks its axis explicitly.
 *
 * Records:
 * - `run` (first): what ran on what — source, configuration, schema, seed, Shoal's version;
 * - `lifecycle`: a member changed state, with a `cause` from a closed set (see `LIFECYCLE_CAUSES`);
 * - `window`: the evaluation views (every `journalEvery` judged rows), each seat's recent accuracy and
 *   the label outcomes so far;
 * - `input-drift`: an input feature's distribution moved (before any label says so);
 * - `summary` (last): the final figures, the confusion matrix and the label outcomes.
 */
export type JournalRecord = RunRecord | LifecycleRecord | WindowRecord | InputDriftRecord | SummaryRecord;

/** The journal format this build writes and reads (`RunRecord.version`). */
export const JOURNAL_VERSION = 5;

/** What a run's labels are: classes to tell apart, or numbers to predict. */
export type Task = 'classification' | 'regression';
export const TASKS: readonly Task[] = ['classification', 'regression'];

export interface RunRecord {
  readonly type: 'run';
  readonly version: typeof JOURNAL_VERSION;
  /** Version of Shoal that wrote the journal. */
  readonly shoal: string;
  readonly startedAt: string;
  /** Where the rows came from: a file path, a topic, a generator. */
  readonly source: string;
  /** The resolved configuration (every default filled in). */
  readonly config: Readonly<Record<string, unknown>>;
  readonly schema: FeatureSchema;
  readonly seed: string;
  /** The stream's true change points, when the source records them (a file written by `shoal spawn`). */
  readonly changes?: ChangePoints;
}

/** The states a member passes through (see `src/ensembles/lifecycle.ts`). */
export type MemberState = 'warming' | 'active' | 'watched' | 'retired';
export const MEMBER_STATES: readonly MemberState[] = ['warming', 'active', 'watched', 'retired'];

/**
 * Why a member changed state: a closed set, so that counters, metrics and alert rules never parse the
 * prose `reason`.
 * - `created`: the member took its seat when the ensemble was built (→ warming or active);
 * - `warmed`: its warm-up rows are done (warming → active);
 * - `watched`: its monitor warned and its recent error is above its own record; an understudy starts;
 * - `watch-cleared`: the warning cleared for a warm-up's worth of rows (watched → active);
 * - `drift`: its monitor signalled drift towards more errors, its understudy was already measurably
 *   better (see `src/ensembles/proof.ts`), and it was retired at once;
 * - `drift-on-trial`: its monitor signalled drift towards more errors, but no understudy is yet
 *   measurably better: the member keeps its seat while its understudy (started now if it had none)
 *   is on trial (→ watched);
 * - `outperformed`: its understudy on trial proved measurably better: it is retired (the signal was
 *   the `drift-on-trial` or `drift-deferred` before);
 * - `trial-lapsed`: the understudy on trial did not prove measurably better in time: it is dropped and
 *   the member stays (watched → active);
 * - `drift-deferred`: drift, and the understudy is measurably better, but the replacement cap was
 *   reached: replaced as soon as the cap allows;
 * - `drift-ignored-improving`: drift towards fewer errors: nothing is replaced (watched → active);
 * - `promoted`: the understudy took the retired member's seat;
 * - `fresh`: a fresh member took the retired member's seat (written by releases before understudies
 *   had to prove themselves: a replacement now always promotes an understudy; read for older journals).
 */
export type LifecycleCause =
  | 'created'
  | 'warmed'
  | 'watched'
  | 'watch-cleared'
  | 'drift'
  | 'drift-on-trial'
  | 'outperformed'
  | 'trial-lapsed'
  | 'drift-deferred'
  | 'drift-ignored-improving'
  | 'promoted'
  | 'fresh';

export const LIFECYCLE_CAUSES: readonly LifecycleCause[] = [
  'created',
  'warmed',
  'watched',
  'watch-cleared',
  'drift',
  'drift-on-trial',
  'outperformed',
  'trial-lapsed',
  'drift-deferred',
  'drift-ignored-improving',
  'promoted',
  'fresh',
];

/** Causes that mean a member monitor signalled drift (acted on, on trial, deferred or towards fewer errors). */
export function isDriftSignal(cause: LifecycleCause): boolean {
  return (
    cause === 'drift' ||
    cause === 'drift-on-trial' ||
    cause === 'drift-deferred' ||
    cause === 'drift-ignored-improving'
  );
}

/**
 * The comparison behind a replacement (or a lapsed trial): the understudy against the member on the
 * rows both answered since the understudy started (see `src/ensembles/proof.ts`).
 */
export interface ProofRecord {
  /** Rows both answered since the understudy started. */
  readonly rows: number;
  /** Rows the member got wrong and the understudy right. */
  readonly gains: number;
  /** Rows the understudy got wrong and the member right. */
  readonly losses: number;
  /** What gains − losses had to exceed: √(2 m ln(m(m + 1)/δ)), m = gains + losses. */
  readonly margin: number;
  /** δ, the chance that an understudy no better than its member passes at any time. */
  readonly delta: number;
}

/** A member changed state, as the ensemble's lifecycle knows it (it does not know rows scored). */
export interface LifecycleChange {
  readonly type: 'lifecycle';
  /** Rows the ensemble had trained on when the change happened. */
  readonly trained: number;
  readonly seat: number;
  /** The member's id, unique within the ensemble and never reused: seat + seats × the members its seat had before. */
  readonly member: number;
  /** The kind of learner the member is (`hoeffding-tree`, `naive-bayes`, …). */
  readonly learner: string;
  /** The state before; null for a member that has just taken a seat. */
  readonly from: MemberState | null;
  readonly to: MemberState;
  readonly cause: LifecycleCause;
  readonly detector: string;
  /** The monitor's estimate of the member's error rate at the change. */
  readonly estimate: number;
  /** The same in prose, for people. */
  readonly reason: string;
  /** On `promoted` and `trial-lapsed`: the comparison that decided. */
  readonly proof?: ProofRecord;
}

/** A lifecycle change as journaled: with the rows scored when it happened. */
export interface LifecycleRecord extends LifecycleChange {
  readonly scored: number;
}

/**
 * The figures of one evaluation view; null where a figure is not yet defined, and where it does not
 * belong to the run's task (a classification has no MAE, a regression no accuracy).
 */
export interface ViewFigures extends ClassificationViewFigures, RegressionViewFigures {
  readonly rows: number;
}

export interface ClassificationViewFigures {
  readonly accuracy: number | null;
  readonly kappa: number | null;
  readonly kappaM: number | null;
  readonly kappaNoChange: number | null;
  readonly logLoss: number | null;
}

/** Mean absolute error, root mean squared error and the coefficient of determination R². */
export interface RegressionViewFigures {
  readonly mae: number | null;
  readonly rmse: number | null;
  readonly r2: number | null;
}

/**
 * What became of labels and pending predictions so far. Every label received is counted once under
 * `inline`, `joined`, `duplicate`, `late`, `evicted` or `unknown`, or is still `held` for its event;
 * every prediction kept for a label is, in the end, `joined`, `expired`, `evicted` or still `pending`.
 */
export interface LabelCounts {
  /** Labels that came with their row and were judged and trained on at once. */
  readonly inline: number;
  /** Labels joined to their pending prediction by id. */
  readonly joined: number;
  /** Labels for an id already joined. */
  readonly duplicate: number;
  /** Labels for a prediction that had expired (older than the age bound). */
  readonly late: number;
  /** Labels for a prediction evicted to make room (the count bound). */
  readonly evicted: number;
  /**
   * Labels whose id matches no prediction the session kept or remembers, and whose event did not come
   * while they were held for it (let go by the count or the time bound of `labels.early…`).
   */
  readonly unknown: number;
  /**
   * Labels that came before their event and were held for it (each is also counted once above when it
   * leaves: `joined` when its event came, `unknown` when it did not, `duplicate` when the event brought a
   * label of its own), or is still `held`.
   */
  readonly early: number;
  /** Labels waiting for their event now. */
  readonly held: number;
  /** Unmatched labels trained on from their own row (policy `train`). */
  readonly trainedUnmatched: number;
  /** Predictions that expired unjoined. */
  readonly expiredPredictions: number;
  /** Predictions evicted unjoined. */
  readonly evictedPredictions: number;
  /** Predictions waiting for their label now. */
  readonly pending: number;
}

export interface WindowRecord {
  readonly type: 'window';
  readonly scored: number;
  readonly trained: number;
  /** The sliding-window view (the last `window` judged rows). */
  readonly window: ViewFigures;
  /** The cumulative view. */
  readonly cumulative: ViewFigures;
  /** Each seat's accuracy over its recent rows, by seat index (none in a regression: no seats). */
  readonly seats: readonly number[];
  readonly labels: LabelCounts;
}

export interface InputDriftRecord {
  readonly type: 'input-drift';
  readonly scored: number;
  readonly trained: number;
  readonly feature: string;
  readonly kind: 'numeric' | 'nominal';
  /** `distribution`: the feature's values moved; `missing-share`: how often it is missing jumped. */
  readonly cause: InputDriftCause;
}

/** Why an input drift was raised. */
export type InputDriftCause = 'distribution' | 'missing-share';

export const INPUT_DRIFT_CAUSES: readonly InputDriftCause[] = ['distribution', 'missing-share'];

/**
 * The final figures: the cumulative view of the run's task (the other task's figures are null), and
 * for a classification the macro F1 and the confusion matrix (a regression has no classes: both empty).
 */
export interface SummaryRecord extends ClassificationViewFigures, RegressionViewFigures {
  readonly type: 'summary';
  readonly task: Task;
  readonly scored: number;
  readonly trained: number;
  /** Rows judged (a label joined to the prediction served for it). */
  readonly rows: number;
  readonly macroF1: number | null;
  /** Class names, index = class code. */
  readonly classes: readonly string[];
  /** confusion[actual][predicted] counts. */
  readonly confusion: readonly (readonly number[])[];
  /** Member monitors that signalled drift (acted on, deferred or towards fewer errors). */
  readonly driftSignals: number;
  readonly warnings: number;
  readonly replacements: number;
  readonly inputDrifts: number;
  readonly labels: LabelCounts;
  readonly seconds: number;
  readonly rowsPerSecond: number;
}
