import {
  ConfigError,
  type ConfigIssue,
  checkOptions,
  checkValue,
  defaultsOf,
  numericSchema,
  type OptionSpec,
  type OptionsOf,
  type OptionTable,
  resolveOptions,
  ShoalError,
} from '../core/index.js';
import { createDetector, DETECTOR_KINDS, DETECTOR_OPTIONS, type DetectorSpec } from '../drift/index.js';
import {
  BAGGING_DEFAULTS,
  BOOSTING_DEFAULTS,
  ENSEMBLE_KINDS,
  ENSEMBLE_OPTIONS,
  type EnsembleKind,
  type EnsembleSpec,
  LIFECYCLE_DEFAULTS,
  LIFECYCLE_OPTIONS,
  REGRESSION_BAGGING_DEFAULTS,
  REGRESSION_BAGGING_OPTIONS,
  type RegressionBaggingOptions,
  STACKING_DEFAULTS,
} from '../ensembles/index.js';
import { VIEW_DEFAULTS } from '../evaluation/index.js';
import {
  checkFeatureSpecs,
  DEFAULT_MISSING,
  DEFAULT_VOCABULARY,
  LABELS_AS,
  type LabelsAs,
} from '../frames/index.js';
import { TASKS, type Task } from '../journal/index.js';
import {
  CLASSIFIER_KINDS,
  CLASSIFIER_OPTIONS,
  type ClassifierSpec,
  createClassifier,
  createRegressor,
  REGRESSOR_KINDS,
  REGRESSOR_OPTIONS,
  type RegressorSpec,
} from '../learners/index.js';

/**
 * A run's configuration (`shoal.yaml`, after parsing): the ensemble, how it is evaluated and how the
 * input is read. Every field is optional; `resolveConfig` fills the defaults in and reports every bad
 * field at once, by its path.
 *
 * @example
 * seed: 7
 * ensemble:
 *   kind: bagging
 *   members: 10
 *   learners: [{ kind: hoeffding-tree, checkInterval: 100 }]
 *   lifecycle: { detector: { kind: adwin, delta: 0.002 } }
 * evaluation: { window: 1000 }
 * inputs: { label: rejected, id: leg_id }
 * labels: { pending: 100000, maxAgeSeconds: 604800, unmatched: ignore }
 *
 * A regression (`task: regression`, or `inputs.labelsAs: regression`) bags regressors instead:
 * `ensemble: { kind: bagging, members: 10, lambda: 1, learners: [{ kind: hoeffding-regression-tree }] }`.
 */
export interface RunConfig {
  readonly seed: string;
  /** What the labels are: classes to tell apart, or numbers to predict. */
  readonly task: Task;
  /** A classification ensemble, or (task `regression`) a bagging of regressors. */
  readonly ensemble: EnsembleSpec | RegressionEnsembleSpec;
  readonly evaluation: EvaluationConfig;
  readonly inputs: InputsConfig;
  readonly labels: LabelsConfig;
  /**
   * Worker threads the ensemble's members train on (`ensemble.threads` in the file; a bagging of a
   * classification only). How a run is spread over cores, not what it computes: the results are those
   * of one thread, so it is left out of the journal's run record and of the configuration's fingerprint.
   */
  readonly threads: number;
}

/** The configuration without `threads`: what the results depend on. */
export function modelConfig(config: RunConfig): Omit<RunConfig, 'threads'> {
  const { threads: _threads, ...rest } = config;
  return rest;
}

/** The ensemble of a regression: online bagging of regressors (no member lifecycle). */
export type RegressionEnsembleSpec = { readonly kind: 'bagging' } & RegressionBaggingOptions;

/**
 * How late labels are joined to the predictions served for them (see `LearningSession`).
 * - `pending`: predictions kept waiting for a label at most (a prediction is evicted once this many
 *   newer ones were made);
 * - `maxAgeSeconds`: a prediction waits at most this long (in the session's time: the stream's own time in a replay, the wall clock when live), or null for no age bound;
 * - `unmatched`: what a label that finds no prediction does: `ignore` (counted only), or `train` on the
 *   label's own row when the label carries the row's features.
 * - `early`: labels that came before their event (no prediction, an id never seen) held for it at most
 *   (the oldest is let go to make room; 0 holds none: such a label counts as unknown at once);
 * - `earlyWaitSeconds`: how long such a label waits for its event (in the session's time, as
 *   `maxAgeSeconds`); one let go unjoined counts as unknown.
 */
export interface LabelsConfig {
  readonly pending: number;
  readonly maxAgeSeconds: number | null;
  readonly unmatched: 'ignore' | 'train';
  readonly early: number;
  readonly earlyWaitSeconds: number;
}

export const LABELS_DEFAULTS: LabelsConfig = {
  pending: 100_000,
  maxAgeSeconds: 604_800,
  unmatched: 'ignore',
  early: 100_000,
  earlyWaitSeconds: 600,
};

export interface EvaluationConfig {
  readonly window: number;
  readonly fading: number;
  /** Rows between two `window` records of the journal. */
  readonly journalEvery: number;
}

export interface InputsConfig {
  readonly label: string | null;
  readonly id: string | null;
  readonly exclude: readonly string[];
  /** Explicit features (see the frames module); null to infer them from the data. */
  readonly features: readonly unknown[] | null;
  readonly vocabulary: number | null;
  /** Text read as a missing value (default: empty, `NA`, `NaN`, `?`, `null`). */
  readonly missing: readonly string[];
  /**
   * How labels are read: class codes, class names, numbers to predict (`regression`, the one reading of
   * a regression), or null to tell codes from names by the first rows.
   */
  readonly labelsAs: LabelsAs | null;
  /** Watch each input feature for drift before labels arrive. */
  readonly monitor: boolean;
}

export const DEFAULT_SEED = '1';

/** The evaluation settings (see `OptionTable`). */
export const EVALUATION_OPTIONS = {
  window: {
    type: 'integer',
    atLeast: 1,
    default: VIEW_DEFAULTS.window,
    doc: 'rows of the sliding-window view',
  },
  fading: {
    type: 'number',
    above: 0,
    atMost: 1,
    default: VIEW_DEFAULTS.fading,
    doc: 'the fading factor of the faded view',
  },
  journalEvery: {
    type: 'integer',
    atLeast: 1,
    default: 1000,
    doc: 'rows between two window records of the journal',
  },
} as const satisfies OptionTable;

/**
 * When a live service (`serve`) writes a checkpoint of its sessions and the offsets they cover: after
 * `everyRows` rows read (events and labels) or `everySeconds` since the last one, whichever comes first,
 * and always when partitions are taken away and on shutdown. `keep` checkpoints stay in the store.
 */
export const CHECKPOINT_CADENCE_OPTIONS = {
  everyRows: {
    type: 'integer',
    atLeast: 1,
    default: 10_000,
    doc: 'rows read (events and labels) after which a checkpoint is written',
  },
  everySeconds: {
    type: 'number',
    above: 0,
    default: 60,
    doc: 'seconds after which a checkpoint is written when rows were read since the last one',
  },
  keep: {
    type: 'integer',
    atLeast: 1,
    default: 3,
    doc: 'checkpoints kept in the store; older ones are deleted after each save',
  },
} as const satisfies OptionTable;

export type CheckpointCadence = OptionsOf<typeof CHECKPOINT_CADENCE_OPTIONS>;

/** The label-join settings' scalar options (see `LabelsConfig`). */
const LABEL_JOIN_OPTIONS = {
  pending: {
    type: 'integer',
    atLeast: 1,
    default: LABELS_DEFAULTS.pending,
    doc: 'predictions kept waiting for a label at most',
  },
  maxAgeSeconds: {
    type: 'number',
    above: 0,
    default: 604_800,
    doc: 'how long a prediction waits for its label, in seconds (null: no bound)',
  },
  unmatched: {
    type: 'choice',
    choices: ['ignore', 'train'],
    default: LABELS_DEFAULTS.unmatched,
    doc: "what a label that finds no prediction does: ignore, or train on the label's own row",
  },
  early: {
    type: 'integer',
    atLeast: 0,
    default: LABELS_DEFAULTS.early,
    doc: 'labels that came before their event held for it at most (0: none)',
  },
  earlyWaitSeconds: {
    type: 'number',
    above: 0,
    default: LABELS_DEFAULTS.earlyWaitSeconds,
    doc: 'how long a label that came before its event waits for it, in seconds',
  },
} as const satisfies OptionTable;

/** Collects every problem of a configuration before one `ConfigError` reports them all. */
class Checker {
  readonly issues: ConfigIssue[] = [];

  fail(path: string, message: string, code: ConfigIssue['code'] = 'wrong-type'): void {
    this.issues.push({ path, code, message });
  }

  /** A plain mapping (or absent: an empty one); keys outside `allowed` are issues. */
  object(path: string, value: unknown, allowed: readonly string[] | null): Record<string, unknown> {
    if (value === undefined || value === null) return {};
    if (typeof value !== 'object' || Array.isArray(value)) {
      this.fail(
        path,
        `must be a mapping${allowed === null ? '' : ` of ${allowed.join(', ')}`}, got ${describe(value)}`,
      );
      return {};
    }
    if (allowed !== null) {
      for (const key of Object.keys(value)) {
        if (!allowed.includes(key))
          this.fail(
            join(path, key),
            `unknown setting; expected one of ${allowed.join(', ')}`,
            'unknown-setting',
          );
      }
    }
    return value as Record<string, unknown>;
  }

  /** The scalar options of a component, by its table; `others` are the keys handled elsewhere. */
  options(path: string, value: Record<string, unknown>, table: OptionTable, others: readonly string[]): void {
    checkOptions(table, value, path, this.issues, others);
  }

  kind<K extends string>(path: string, value: unknown, kinds: readonly K[]): K | null {
    if (typeof value !== 'string' || !(kinds as readonly string[]).includes(value)) {
      this.fail(
        join(path, 'kind'),
        `must be one of ${kinds.join(', ')}, got ${describe(value)}`,
        'not-one-of',
      );
      return null;
    }
    return value as K;
  }

  /**
   * Run a constructor once its options passed their tables, for the rules between options (a warning
   * level below the drift level, say); its issues land under `path`.
   */
  attempt(path: string, build: () => unknown): void {
    try {
      build();
    } catch (e) {
      if (!(e instanceof ShoalError)) throw e;
      if (e instanceof ConfigError)
        for (const i of e.issues) this.fail(join(path, i.path), i.message, i.code);
      else this.fail(path, e.message, 'conflict');
    }
  }

  /** Scalar settings by a table; returns them with the table's defaults filled in. */
  settings<T extends OptionTable>(path: string, value: unknown, table: T): OptionsOf<T> {
    const raw = this.object(path, value, null);
    const before = this.issues.length;
    this.options(path, raw, table, []);
    if (this.issues.length > before) return defaultsOf(table);
    return resolveOptions(path, table, raw, []);
  }
}

function join(path: string, key: string | number): string {
  if (typeof key === 'number') return `${path}[${key}]`;
  return path ? `${path}.${key}` : key;
}

function describe(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'a list';
  if (typeof value === 'object') return 'a mapping';
  return typeof value === 'string' ? JSON.stringify(value) : String(value);
}

/** Schema used only to validate learner options before the data's schema is known. */
const PROBE_SCHEMA = numericSchema(64);

/** A family of learners as configuration names them: their kinds, option tables and constructor. */
interface LearnerFamily<K extends string> {
  readonly kinds: readonly K[];
  readonly options: Readonly<Record<string, OptionTable>>;
  readonly build: (spec: Record<string, unknown>) => unknown;
}

const CLASSIFIERS: LearnerFamily<(typeof CLASSIFIER_KINDS)[number]> = {
  kinds: CLASSIFIER_KINDS,
  options: CLASSIFIER_OPTIONS,
  build: (spec) => createClassifier(spec as ClassifierSpec, PROBE_SCHEMA, 0),
};

const META_LEARNERS: LearnerFamily<'logistic' | 'mlp'> = { ...CLASSIFIERS, kinds: ['logistic', 'mlp'] };

const REGRESSORS: LearnerFamily<(typeof REGRESSOR_KINDS)[number]> = {
  kinds: REGRESSOR_KINDS,
  options: REGRESSOR_OPTIONS,
  build: (spec) => createRegressor(spec as RegressorSpec, PROBE_SCHEMA, 0),
};

/** One learner (or meta-learner) spec: its kind, then its options by the kind's table. */
function checkLearner<K extends string>(
  c: Checker,
  path: string,
  raw: unknown,
  family: LearnerFamily<K>,
): Record<string, unknown> {
  const spec = c.object(path, raw, null);
  const kind = c.kind(path, spec.kind, family.kinds);
  if (kind === null) return spec;
  const before = c.issues.length;
  c.options(path, spec, family.options[kind]!, ['kind']);
  if (c.issues.length === before) c.attempt(path, () => family.build(spec));
  return spec;
}

function checkLearners<K extends string>(
  c: Checker,
  path: string,
  value: unknown,
  family: LearnerFamily<K>,
): Record<string, unknown>[] | undefined {
  if (value === undefined) return undefined;
  if (!Array.isArray(value) || value.length === 0) {
    c.fail(path, `must be a non-empty list of learner specs, got ${describe(value)}`);
    return undefined;
  }
  return value.map((raw, i) => checkLearner(c, join(path, i), raw, family));
}

function checkDetector(c: Checker, path: string, value: unknown): DetectorSpec | undefined {
  if (value === undefined) return undefined;
  const spec = c.object(path, value, null);
  const kind = c.kind(path, spec.kind, DETECTOR_KINDS);
  if (kind !== null) {
    const before = c.issues.length;
    c.options(path, spec, DETECTOR_OPTIONS[kind], ['kind']);
    if (c.issues.length === before) c.attempt(path, () => createDetector(spec as DetectorSpec));
  }
  return spec as DetectorSpec;
}

/** Settings of an ensemble beside its scalar options, by kind. */
const NESTED: Readonly<Record<EnsembleKind, readonly string[]>> = {
  bagging: ['kind', 'learners', 'lifecycle', 'threads'],
  boosting: ['kind', 'learners', 'lifecycle', 'threads'],
  stacking: ['kind', 'learners', 'meta', 'lifecycle', 'threads'],
};

/**
 * `ensemble.threads`: a whole number from 1; more than one only for a bagging of a classification,
 * whose members are independent (boosting and stacking chain their members row by row).
 */
function checkThreads(c: Checker, raw: Record<string, unknown>, kind: string, task: Task): number {
  const value = raw.threads;
  if (value === undefined) return 1;
  const path = join('ensemble', 'threads');
  if (typeof value !== 'number' || !Number.isInteger(value)) {
    c.fail(path, `must be a whole number, got ${describe(value)}`, 'not-an-integer');
    return 1;
  }
  if (value < 1) {
    c.fail(path, `must be at least 1, got ${value}`, 'out-of-range');
    return 1;
  }
  if (value > 1 && (kind !== 'bagging' || task !== 'classification')) {
    c.fail(
      path,
      `${value} threads need a bagging of a classification (members that train independently), not a ${task === 'regression' ? 'regression' : kind}`,
      'conflict',
    );
    return 1;
  }
  return value;
}

function checkEnsemble(c: Checker, value: unknown): EnsembleSpec {
  const path = 'ensemble';
  const raw = c.object(path, value, null);
  const kind = c.kind(path, raw.kind ?? 'bagging', ENSEMBLE_KINDS) ?? 'bagging';
  c.options(path, raw, ENSEMBLE_OPTIONS[kind], NESTED[kind]);
  const { threads: _threads, ...settings } = raw;
  const spec: Record<string, unknown> = { ...settings, kind };
  if (raw.learners !== undefined)
    spec.learners = checkLearners(c, join(path, 'learners'), raw.learners, CLASSIFIERS);
  if (kind === 'stacking' && raw.meta !== undefined)
    spec.meta = checkLearner(c, join(path, 'meta'), raw.meta, META_LEARNERS);
  const lifecyclePath = join(path, 'lifecycle');
  const lifecycle = c.object(lifecyclePath, raw.lifecycle, null);
  c.options(lifecyclePath, lifecycle, LIFECYCLE_OPTIONS, ['detector']);
  const detector = checkDetector(c, join(lifecyclePath, 'detector'), lifecycle.detector);
  spec.lifecycle = { ...LIFECYCLE_DEFAULTS, ...lifecycle, ...(detector === undefined ? {} : { detector }) };
  // Every default filled in, down to each learner's and the detector's options, so that the journal
  // records exactly what ran.
  const defaults = { bagging: BAGGING_DEFAULTS, boosting: BOOSTING_DEFAULTS, stacking: STACKING_DEFAULTS }[
    kind
  ];
  const full: Record<string, unknown> = { ...defaults, ...spec };
  const learners = full.learners as readonly { kind?: string }[] | undefined;
  if (Array.isArray(learners)) full.learners = learners.map((l) => filled(l, CLASSIFIER_OPTIONS));
  if (full.meta !== undefined) full.meta = filled(full.meta as { kind?: string }, CLASSIFIER_OPTIONS);
  const resolved = full.lifecycle as Record<string, unknown>;
  full.lifecycle = {
    ...resolved,
    detector: filled(resolved.detector as { kind?: string }, DETECTOR_OPTIONS),
  };
  return full as unknown as EnsembleSpec;
}

/**
 * The ensemble of a regression: online bagging of regressors, with `members`, `lambda` and `learners`.
 * Boosting and stacking combine class votes, and the member lifecycle judges 0/1 errors: neither
 * applies, and naming them is an issue.
 */
function checkRegressionEnsemble(c: Checker, value: unknown): RegressionEnsembleSpec {
  const path = 'ensemble';
  const raw = c.object(path, value, null);
  if (raw.kind !== undefined && raw.kind !== 'bagging')
    c.fail(
      join(path, 'kind'),
      `must be bagging for task regression (boosting and stacking combine class votes), got ${describe(raw.kind)}`,
      'not-one-of',
    );
  if (raw.lifecycle !== undefined) {
    // Each setting by its own path, so that one a command-line flag gave is named as that flag.
    const lifecycle = c.object(join(path, 'lifecycle'), raw.lifecycle, null);
    const keys = Object.keys(lifecycle);
    for (const key of keys.length > 0
      ? keys.map((k) => join(join(path, 'lifecycle'), k))
      : [join(path, 'lifecycle')])
      c.fail(
        key,
        'a regression has no member lifecycle (its monitors judge 0/1 errors); remove it',
        'conflict',
      );
  }
  c.options(path, raw, REGRESSION_BAGGING_OPTIONS, ['kind', 'learners', 'lifecycle', 'threads']);
  const learners = checkLearners(c, join(path, 'learners'), raw.learners, REGRESSORS);
  const { lifecycle: _, threads: _threads, ...rest } = raw;
  return {
    kind: 'bagging',
    ...REGRESSION_BAGGING_DEFAULTS,
    ...rest,
    learners: (learners ?? REGRESSION_BAGGING_DEFAULTS.learners).map((l) => filled(l, REGRESSOR_OPTIONS)),
  } as RegressionEnsembleSpec;
}

/** A learner or detector spec with the defaults of its kind under the options it names; `kind` first. */
function filled<T extends { kind?: string }>(spec: T, tables: Readonly<Record<string, OptionTable>>): T {
  const table = tables[spec?.kind ?? ''];
  return { kind: spec?.kind, ...(table === undefined ? {} : defaultsOf(table)), ...spec };
}

function checkEvaluation(c: Checker, value: unknown): EvaluationConfig {
  return c.settings('evaluation', value, EVALUATION_OPTIONS);
}

function checkInputs(c: Checker, value: unknown, task: Task): InputsConfig {
  const raw = c.object('inputs', value, [
    'label',
    'id',
    'exclude',
    'features',
    'vocabulary',
    'missing',
    'labelsAs',
    'monitor',
  ]);
  const stringOrNull = (path: string, v: unknown, fallback: string | null): string | null => {
    if (v === undefined) return fallback;
    if (v === null || (typeof v === 'string' && v.length > 0)) return v;
    c.fail(path, `must be a column name or null, got ${describe(v)}`);
    return fallback;
  };
  const texts = (path: string, v: unknown, what: string): readonly string[] | null => {
    if (Array.isArray(v) && v.every((x) => typeof x === 'string')) return v;
    c.fail(path, `must be a list of ${what}, got ${describe(v)}`);
    return null;
  };
  const exclude = raw.exclude === undefined ? [] : texts('inputs.exclude', raw.exclude, 'column names');
  const missing =
    raw.missing === undefined
      ? DEFAULT_MISSING
      : texts('inputs.missing', raw.missing, 'texts read as missing');
  const vocabulary =
    raw.vocabulary === undefined
      ? null
      : checkValue(VOCABULARY_OPTION, raw.vocabulary) === null
        ? (raw.vocabulary as number)
        : null;
  if (raw.vocabulary !== undefined && vocabulary === null)
    c.fail('inputs.vocabulary', checkValue(VOCABULARY_OPTION, raw.vocabulary)!.message, 'out-of-range');
  const features =
    raw.features === undefined
      ? null
      : checkFeatureSpecs(c.issues, 'inputs.features', raw.features, vocabulary ?? DEFAULT_VOCABULARY);
  const labelsAs = raw.labelsAs === undefined ? null : raw.labelsAs;
  const knownLabelsAs = LABELS_AS.includes(labelsAs as LabelsAs);
  if (labelsAs !== null && !knownLabelsAs)
    c.fail(
      'inputs.labelsAs',
      `must be one of ${LABELS_AS.join(', ')}, got ${describe(labelsAs)}`,
      'not-one-of',
    );
  if (knownLabelsAs && (labelsAs === 'regression') !== (task === 'regression'))
    c.fail(
      'inputs.labelsAs',
      `${describe(labelsAs)} does not fit task ${task}: a regression reads its labels as numbers (regression), a classification as class-codes or class-names`,
      'conflict',
    );
  if (raw.monitor !== undefined && typeof raw.monitor !== 'boolean')
    c.fail('inputs.monitor', `must be true or false, got ${describe(raw.monitor)}`);
  return {
    label: stringOrNull('inputs.label', raw.label, 'label'),
    id: stringOrNull('inputs.id', raw.id, null),
    exclude: exclude ?? [],
    features: features === null ? null : (raw.features as unknown[]),
    vocabulary,
    missing: missing ?? DEFAULT_MISSING,
    labelsAs: task === 'regression' ? 'regression' : knownLabelsAs ? (labelsAs as LabelsAs) : null,
    monitor: typeof raw.monitor === 'boolean' ? raw.monitor : true,
  };
}

const VOCABULARY_OPTION = {
  type: 'integer',
  atLeast: 2,
  default: DEFAULT_VOCABULARY,
  doc: 'codes of a nominal feature whose categories are discovered, the last being the overflow bucket',
} as const satisfies OptionSpec;

function checkLabels(c: Checker, value: unknown): LabelsConfig {
  const raw = c.object('labels', value, null);
  const { maxAgeSeconds, ...rest } = raw;
  const settings = c.settings('labels', rest, LABEL_JOIN_OPTIONS);
  if (maxAgeSeconds !== undefined && maxAgeSeconds !== null)
    c.options('labels', { maxAgeSeconds }, LABEL_JOIN_OPTIONS, []);
  return {
    pending: settings.pending,
    unmatched: settings.unmatched,
    early: settings.early,
    earlyWaitSeconds: settings.earlyWaitSeconds,
    maxAgeSeconds:
      maxAgeSeconds === null
        ? null
        : typeof maxAgeSeconds === 'number' && maxAgeSeconds > 0
          ? maxAgeSeconds
          : LABELS_DEFAULTS.maxAgeSeconds,
  };
}

/**
 * The task: as `task` says, else a regression when the labels are read as numbers (`inputs.labelsAs:
 * regression`), else a classification. A `task` that contradicts `inputs.labelsAs` is reported there.
 */
function checkTask(c: Checker, value: unknown, inputs: unknown): Task {
  if (value === undefined) {
    const labelsAs =
      typeof inputs === 'object' && inputs !== null ? (inputs as { labelsAs?: unknown }).labelsAs : undefined;
    return labelsAs === 'regression' ? 'regression' : 'classification';
  }
  if (TASKS.includes(value as Task)) return value as Task;
  c.fail('task', `must be one of ${TASKS.join(', ')}, got ${describe(value)}`, 'not-one-of');
  return 'classification';
}

/**
 * Check a parsed configuration and fill in the defaults. Every problem is reported at once in a
 * `ConfigError` whose issues name the field (`ensemble.learners[1].checkInterval: …`); `source` names
 * the file in the message.
 */
export function resolveConfig(raw: unknown, source: string): RunConfig {
  const c = new Checker();
  if (Array.isArray(raw) || (raw !== null && raw !== undefined && typeof raw !== 'object')) {
    throw new ConfigError(source, [
      {
        path: '(top level)',
        code: 'wrong-type',
        message: `a configuration is a mapping of seed, task, ensemble, evaluation, inputs and labels, got ${describe(raw)}`,
      },
    ]);
  }
  const top = c.object('', raw, ['seed', 'task', 'ensemble', 'evaluation', 'inputs', 'labels']);
  let seed = DEFAULT_SEED;
  if (top.seed !== undefined) {
    if (
      (typeof top.seed === 'number' && Number.isFinite(top.seed)) ||
      (typeof top.seed === 'string' && top.seed.length > 0)
    ) {
      seed = String(top.seed);
    } else {
      c.fail('seed', `must be a number or a string, got ${describe(top.seed)}`);
    }
  }
  const task = checkTask(c, top.task, top.inputs);
  const ensemble =
    task === 'regression' ? checkRegressionEnsemble(c, top.ensemble) : checkEnsemble(c, top.ensemble);
  const rawEnsemble = top.ensemble !== null && typeof top.ensemble === 'object' ? top.ensemble : {};
  const threads = checkThreads(c, rawEnsemble as Record<string, unknown>, ensemble.kind, task);
  const evaluation = checkEvaluation(c, top.evaluation);
  const inputs = checkInputs(c, top.inputs, task);
  const labels = checkLabels(c, top.labels);
  if (c.issues.length > 0) throw new ConfigError(source, c.issues);
  return { seed, task, ensemble, evaluation, inputs, labels, threads };
}
