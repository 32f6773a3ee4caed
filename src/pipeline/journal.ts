import type { FeatureSchema } from '../core/index.js';
import type { LifecycleRecord } from '../ensembles/index.js';

/**
 * The journal of a run: one JSON object per line (NDJSON), in the order things happened. It is the
 * audit trail of every member change and the input of `shoal report`.
 *
 * Records:
 * - `run` (first): what ran on what — source, configuration, schema, classes, seed, Shoal's version;
 * - `lifecycle`: a member changed state (see `LifecycleRecord`);
 * - `window`: the evaluation views at a row (every `every` rows), with each seat's recent accuracy;
 * - `input-drift`: an input feature's distribution moved (before any label says so);
 * - `summary` (last): the final figures and the confusion matrix.
 */
export type JournalRecord = RunRecord | LifecycleRecord | WindowRecord | InputDriftRecord | SummaryRecord;

export interface RunRecord {
  readonly type: 'run';
  readonly version: 1;
  /** Version of Shoal that wrote the journal. */
  readonly shoal: string;
  readonly startedAt: string;
  /** Where the rows came from: a file path, a topic, a generator. */
  readonly source: string;
  /** The resolved configuration (every default filled in). */
  readonly config: Readonly<Record<string, unknown>>;
  readonly schema: FeatureSchema;
  readonly seed: string;
}

/** The figures of one evaluation view; null where a figure is not yet defined. */
export interface ViewFigures {
  readonly rows: number;
  readonly accuracy: number | null;
  readonly kappa: number | null;
  readonly kappaM: number | null;
  readonly kappaTemporal: number | null;
  readonly logLoss: number | null;
}

export interface WindowRecord {
  readonly type: 'window';
  /** Rows evaluated so far. */
  readonly row: number;
  /** The sliding-window view (the last `window` rows). */
  readonly window: ViewFigures;
  /** The cumulative view. */
  readonly cumulative: ViewFigures;
  /** Each seat's accuracy over its recent rows, by seat index. */
  readonly seats: readonly number[];
}

export interface InputDriftRecord {
  readonly type: 'input-drift';
  readonly row: number;
  readonly feature: string;
  readonly kind: 'numeric' | 'nominal';
}

export interface SummaryRecord {
  readonly type: 'summary';
  readonly rows: number;
  readonly accuracy: number | null;
  readonly kappa: number | null;
  readonly kappaM: number | null;
  readonly kappaTemporal: number | null;
  readonly logLoss: number | null;
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
  readonly seconds: number;
  readonly rowsPerSecond: number;
}
