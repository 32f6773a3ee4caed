import { ConfigError, type ConfigIssue, numericSchema, ShoalError } from '../core/index.js';
import {
  ADWIN_DEFAULTS,
  createDetector,
  DDM_DEFAULTS,
  DETECTOR_KINDS,
  type DetectorSpec,
  EDDM_DEFAULTS,
  HDDM_A_DEFAULTS,
  PAGE_HINKLEY_DEFAULTS,
} from '../drift/index.js';
import {
  BAGGING_DEFAULTS,
  BOOSTING_DEFAULTS,
  createEnsemble,
  ENSEMBLE_KINDS,
  type EnsembleSpec,
  LIFECYCLE_DEFAULTS,
  STACKING_DEFAULTS,
} from '../ensembles/index.js';
import { VIEW_DEFAULTS } from '../evaluation/index.js';
import {
  CLASSIFIER_KINDS,
  type ClassifierSpec,
  createClassifier,
  HOEFFDING_TREE_DEFAULTS,
  KNN_WINDOW_DEFAULTS,
  LINEAR_SVM_DEFAULTS,
  LOGISTIC_DEFAULTS,
  MLP_DEFAULTS,
  NAIVE_BAYES_DEFAULTS,
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
 */
export interface RunConfig {
  readonly seed: string;
  readonly ensemble: EnsembleSpec;
  readonly evaluation: EvaluationConfig;
  readonly inputs: InputsConfig;
  readonly labels: LabelsConfig;
}

/**
 * How late labels are joined to the predictions served for them (see `LearningSession`).
 * - `pending`: predictions kept waiting for a label at most (a prediction is evicted once this many
 *   newer ones were made);
 * - `maxAgeSeconds`: a prediction waits at most this long (in the session's time: the stream's own time in a replay, the wall clock when live), or null for no age bound;
 * - `unmatched`: what a label that finds no prediction does: `ignore` (counted only), or `train` on the
 *   label's own row when the label carries the row's features.
 */
export interface LabelsConfig {
  readonly pending: number;
  readonly maxAgeSeconds: number | null;
  readonly unmatched: 'ignore' | 'train';
}

export const LABELS_DEFAULTS: LabelsConfig = {
  pending: 100_000,
  maxAgeSeconds: 604_800,
  unmatched: 'ignore',
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
  /** Watch each input feature for drift before labels arrive. */
  readonly monitor: boolean;
}

export const DEFAULT_SEED = '1';

const LEARNER_DEFAULTS: Readonly<Record<string, object>> = {
  'hoeffding-tree': HOEFFDING_TREE_DEFAULTS,
  'naive-bayes': NAIVE_BAYES_DEFAULTS,
  logistic: LOGISTIC_DEFAULTS,
  'knn-window': KNN_WINDOW_DEFAULTS,
  'linear-svm': LINEAR_SVM_DEFAULTS,
  mlp: MLP_DEFAULTS,
};

const DETECTOR_DEFAULTS: Readonly<Record<string, object>> = {
  adwin: ADWIN_DEFAULTS,
  ddm: DDM_DEFAULTS,
  eddm: EDDM_DEFAULTS,
  'page-hinkley': PAGE_HINKLEY_DEFAULTS,
  'hddm-a': HDDM_A_DEFAULTS,
};

const ENSEMBLE_DEFAULTS: Readonly<Record<string, object>> = {
  bagging: BAGGING_DEFAULTS,
  boosting: BOOSTING_DEFAULTS,
  stacking: STACKING_DEFAULTS,
};

/** Collects every problem of a configuration before one `ConfigError` reports them all. */
class Checker {
  readonly issues: ConfigIssue[] = [];

  fail(path: string, message: string): void {
    this.issues.push({ path, message });
  }

  /** A plain object (or absent: an empty one) whose keys are all among `allowed`. */
  object(path: string, value: unknown, allowed: readonly string[]): Record<string, unknown> {
    if (value === undefined || value === null) return {};
    if (typeof value !== 'object' || Array.isArray(value)) {
      this.fail(path || '(top level)', `must be a mapping, got ${describe(value)}`);
      return {};
    }
    for (const key of Object.keys(value)) {
      if (!allowed.includes(key))
        this.fail(join(path, key), `unknown setting; expected one of ${allowed.join(', ')}`);
    }
    return value as Record<string, unknown>;
  }

  /** Options of a learner or detector: keys of its defaults, each of the default's type. */
  options(path: string, value: Record<string, unknown>, defaults: object): void {
    const known = defaults as Readonly<Record<string, unknown>>;
    for (const [key, v] of Object.entries(value)) {
      if (key === 'kind') continue;
      if (!(key in known)) {
        this.fail(join(path, key), `unknown setting; expected one of kind, ${Object.keys(known).join(', ')}`);
      } else if (typeof v !== typeof known[key]) {
        this.fail(join(path, key), `must be a ${typeof known[key]}, got ${describe(v)}`);
      }
    }
  }

  kind(path: string, value: unknown, kinds: readonly string[]): string | null {
    if (typeof value !== 'string' || !kinds.includes(value)) {
      this.fail(join(path, 'kind'), `must be one of ${kinds.join(', ')}, got ${describe(value)}`);
      return null;
    }
    return value;
  }

  /** Run a constructor that validates ranges; its ShoalError becomes an issue at `path`. */
  attempt(path: string, build: () => unknown): void {
    try {
      build();
    } catch (e) {
      if (!(e instanceof ShoalError)) throw e;
      if (e instanceof ConfigError) for (const i of e.issues) this.fail(join(path, i.path), i.message);
      else this.fail(path, e.message);
    }
  }

  number(path: string, value: unknown, test: (n: number) => boolean, expected: string): number | undefined {
    if (value === undefined) return undefined;
    if (typeof value !== 'number' || !test(value)) {
      this.fail(path, `must be ${expected}, got ${describe(value)}`);
      return undefined;
    }
    return value;
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

function checkLearners(c: Checker, path: string, value: unknown): ClassifierSpec[] | undefined {
  if (value === undefined) return undefined;
  if (!Array.isArray(value) || value.length === 0) {
    c.fail(path, 'must be a non-empty list of learner specs');
    return undefined;
  }
  return value.map((raw, i) => {
    const p = join(path, i);
    const spec = c.object(p, raw, [
      'kind',
      ...Object.keys(LEARNER_DEFAULTS[(raw as { kind?: string })?.kind ?? ''] ?? {}),
    ]);
    const kind = c.kind(p, spec.kind, CLASSIFIER_KINDS);
    if (kind !== null) {
      c.options(p, spec, LEARNER_DEFAULTS[kind]!);
      c.attempt(p, () => createClassifier(spec as ClassifierSpec, PROBE_SCHEMA, 0));
    }
    return spec as ClassifierSpec;
  });
}

function checkDetector(c: Checker, path: string, value: unknown): DetectorSpec | undefined {
  if (value === undefined) return undefined;
  const kindName = (value as { kind?: string })?.kind ?? '';
  const spec = c.object(path, value, ['kind', ...Object.keys(DETECTOR_DEFAULTS[kindName] ?? {})]);
  const kind = c.kind(path, spec.kind, DETECTOR_KINDS);
  if (kind !== null) {
    c.options(path, spec, DETECTOR_DEFAULTS[kind]!);
    c.attempt(path, () => createDetector(spec as DetectorSpec));
  }
  return spec as DetectorSpec;
}

function checkEnsemble(c: Checker, value: unknown): EnsembleSpec {
  const path = 'ensemble';
  const kindName = (value as { kind?: string } | undefined)?.kind ?? 'bagging';
  const defaults = ENSEMBLE_DEFAULTS[kindName] ?? {};
  const raw = c.object(path, value, ['kind', ...Object.keys(defaults)]);
  const kind = c.kind(path, raw.kind ?? 'bagging', ENSEMBLE_KINDS);
  const spec: Record<string, unknown> = { ...raw, kind: kind ?? 'bagging' };
  if (raw.learners !== undefined) spec.learners = checkLearners(c, join(path, 'learners'), raw.learners);
  if (kind === 'stacking' && raw.meta !== undefined) {
    const metaPath = join(path, 'meta');
    const metaKind = (raw.meta as { kind?: string })?.kind ?? '';
    const meta = c.object(metaPath, raw.meta, ['kind', ...Object.keys(LEARNER_DEFAULTS[metaKind] ?? {})]);
    if (c.kind(metaPath, meta.kind, ['logistic', 'mlp']) !== null)
      c.options(metaPath, meta, LEARNER_DEFAULTS[metaKind]!);
  }
  const lifecyclePath = join(path, 'lifecycle');
  const lifecycle = c.object(lifecyclePath, raw.lifecycle, Object.keys(LIFECYCLE_DEFAULTS));
  const detector = checkDetector(c, join(lifecyclePath, 'detector'), lifecycle.detector);
  for (const [key, v] of Object.entries(lifecycle)) {
    if (key === 'detector' || !(key in LIFECYCLE_DEFAULTS)) continue;
    const want = typeof LIFECYCLE_DEFAULTS[key as keyof typeof LIFECYCLE_DEFAULTS];
    if (typeof v !== want) c.fail(join(lifecyclePath, key), `must be a ${want}, got ${describe(v)}`);
  }
  spec.lifecycle = { ...LIFECYCLE_DEFAULTS, ...lifecycle, ...(detector === undefined ? {} : { detector }) };
  if (c.issues.length === 0) c.attempt(path, () => createEnsemble(spec as EnsembleSpec, PROBE_SCHEMA, 0));
  // Every default filled in, down to each learner's and the detector's options, so that the journal
  // records exactly what ran.
  const full: Record<string, unknown> = { ...defaults, ...spec };
  const learners = full.learners as readonly { kind?: string }[] | undefined;
  if (Array.isArray(learners)) full.learners = learners.map((l) => filled(l, LEARNER_DEFAULTS));
  if (full.meta !== undefined) full.meta = filled(full.meta as { kind?: string }, LEARNER_DEFAULTS);
  const resolved = full.lifecycle as Record<string, unknown>;
  full.lifecycle = {
    ...resolved,
    detector: filled(resolved.detector as { kind?: string }, DETECTOR_DEFAULTS),
  };
  return full as unknown as EnsembleSpec;
}

/** A learner or detector spec with the defaults of its kind under the options it names; `kind` first. */
function filled<T extends { kind?: string }>(spec: T, table: Readonly<Record<string, object>>): T {
  return { kind: spec?.kind, ...(table[spec?.kind ?? ''] ?? {}), ...spec };
}

function checkEvaluation(c: Checker, value: unknown): EvaluationConfig {
  const raw = c.object('evaluation', value, ['window', 'fading', 'journalEvery']);
  const positiveInteger = (n: number) => Number.isInteger(n) && n >= 1;
  return {
    window:
      c.number('evaluation.window', raw.window, positiveInteger, 'a whole number ≥ 1') ??
      VIEW_DEFAULTS.window,
    fading:
      c.number('evaluation.fading', raw.fading, (n) => n > 0 && n <= 1, 'in (0, 1]') ?? VIEW_DEFAULTS.fading,
    journalEvery:
      c.number('evaluation.journalEvery', raw.journalEvery, positiveInteger, 'a whole number ≥ 1') ?? 1000,
  };
}

function checkInputs(c: Checker, value: unknown): InputsConfig {
  const raw = c.object('inputs', value, ['label', 'id', 'exclude', 'features', 'vocabulary', 'monitor']);
  const stringOrNull = (path: string, v: unknown, fallback: string | null): string | null => {
    if (v === undefined) return fallback;
    if (v === null || (typeof v === 'string' && v.length > 0)) return v;
    c.fail(path, `must be a column name or null, got ${describe(v)}`);
    return fallback;
  };
  const exclude = raw.exclude ?? [];
  if (!Array.isArray(exclude) || !exclude.every((x) => typeof x === 'string'))
    c.fail('inputs.exclude', 'must be a list of column names');
  if (raw.features !== undefined && !Array.isArray(raw.features))
    c.fail('inputs.features', 'must be a list of feature specs');
  if (raw.monitor !== undefined && typeof raw.monitor !== 'boolean')
    c.fail('inputs.monitor', `must be true or false, got ${describe(raw.monitor)}`);
  return {
    label: stringOrNull('inputs.label', raw.label, 'label'),
    id: stringOrNull('inputs.id', raw.id, null),
    exclude: Array.isArray(exclude) ? (exclude as string[]) : [],
    features: Array.isArray(raw.features) ? raw.features : null,
    vocabulary:
      c.number(
        'inputs.vocabulary',
        raw.vocabulary,
        (n) => Number.isInteger(n) && n >= 2,
        'a whole number ≥ 2',
      ) ?? null,
    monitor: typeof raw.monitor === 'boolean' ? raw.monitor : true,
  };
}

function checkLabels(c: Checker, value: unknown): LabelsConfig {
  const raw = c.object('labels', value, ['pending', 'maxAgeSeconds', 'unmatched']);
  const unmatched = raw.unmatched ?? LABELS_DEFAULTS.unmatched;
  if (unmatched !== 'ignore' && unmatched !== 'train')
    c.fail('labels.unmatched', `must be one of ignore, train, got ${describe(unmatched)}`);
  return {
    pending:
      c.number('labels.pending', raw.pending, (n) => Number.isInteger(n) && n >= 1, 'a whole number ≥ 1') ??
      LABELS_DEFAULTS.pending,
    maxAgeSeconds:
      raw.maxAgeSeconds === null
        ? null
        : (c.number('labels.maxAgeSeconds', raw.maxAgeSeconds, (n) => n > 0, 'a number > 0 or null') ??
          LABELS_DEFAULTS.maxAgeSeconds),
    unmatched: unmatched === 'train' ? 'train' : 'ignore',
  };
}

/**
 * Check a parsed configuration and fill in the defaults. Every problem is reported at once in a
 * `ConfigError` whose issues name the field (`ensemble.learners[1].checkInterval: …`); `source` names
 * the file in the message.
 */
export function resolveConfig(raw: unknown, source: string): RunConfig {
  const c = new Checker();
  const top = c.object('', raw, ['seed', 'ensemble', 'evaluation', 'inputs', 'labels']);
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
  const ensemble = checkEnsemble(c, top.ensemble);
  const evaluation = checkEvaluation(c, top.evaluation);
  const inputs = checkInputs(c, top.inputs);
  const labels = checkLabels(c, top.labels);
  if (c.issues.length > 0) throw new ConfigError(source, c.issues);
  return { seed, ensemble, evaluation, inputs, labels };
}
