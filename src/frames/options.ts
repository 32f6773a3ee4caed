import { ConfigError, type ConfigIssue, type Feature } from '../core/index.js';
import { DEFAULT_MISSING } from './cells.js';

/**
 * What a stream's columns mean. Everything is optional: by default the column `label` is the label,
 * every other column is a feature, and the feature kinds are inferred from the first batch.
 *
 * @example
 * const decoder = new FrameDecoder({
 *   label: 'rejected',
 *   id: 'leg_id',
 *   features: [
 *     { name: 'box_temp_mean', kind: 'numeric' },
 *     { name: 'product', kind: 'nominal', categories: ['dairy', 'produce', 'frozen', 'meat', 'seafood'] },
 *     { name: 'carrier', kind: 'nominal', values: 16 },
 *   ],
 * });
 */
export interface FrameOptions {
  /**
   * The label column (default `label`); null when the stream carries no labels. When the default
   * column is absent the frames simply have no labels; a column named here explicitly must exist.
   */
  readonly label?: string | null;
  /**
   * The label column may be absent even when named (events whose labels come later on a topic of their
   * own, as `serve` reads them with `kafka.labels`); default false.
   */
  readonly labelOptional?: boolean;
  /** A column of event ids, used to join late labels to predictions. */
  readonly id?: string;
  /** Columns that are neither features nor label nor id. */
  readonly exclude?: readonly string[];
  /** The features, in order; when given, these columns and no others are features. */
  readonly features?: readonly FeatureSpec[];
  /** Known class names: they take label codes 0, 1, … in this order; other classes follow as they appear. */
  readonly classes?: readonly string[];
  /** Codes of a nominal feature whose categories are discovered, the last being the overflow bucket (default 32). */
  readonly vocabulary?: number;
  /** The most classes a label column may name (default 1024). */
  readonly maxClasses?: number;
  /** Text read as a missing value in any column (default: empty, `NA`, `NaN`, `?`, `null`). */
  readonly missing?: readonly string[];
  /**
   * How labels are read: `class-codes` (integers 0, 1, …), `class-names` (any value names a class) or
   * `regression` (each label is a number to predict). By default labels are codes when the first rows'
   * labels are all integers from 0 to 1023, else names.
   */
  readonly labelsAs?: LabelsAs;
}

/** One feature of an explicit specification. */
export interface FeatureSpec {
  readonly name: string;
  readonly kind: 'numeric' | 'nominal';
  /** Known categories of a nominal feature: codes 0, 1, … in this order. */
  readonly categories?: readonly string[];
  /**
   * Codes of a nominal feature. Equal to the number of categories (the default when categories are
   * listed): unknown categories are refused. Larger: further categories get codes as they appear and the
   * last code is the overflow bucket. Without categories it defaults to `vocabulary`.
   */
  readonly values?: number;
}

/** How labels are read (see `FrameOptions.labelsAs`). */
export type LabelsAs = 'class-codes' | 'class-names' | 'regression';
export const LABELS_AS: readonly LabelsAs[] = ['class-codes', 'class-names', 'regression'];

export const DEFAULT_LABEL = 'label';
export const DEFAULT_VOCABULARY = 32;
export const DEFAULT_MAX_CLASSES = 1024;

/** Frame options after validation, with defaults filled in. */
export interface ResolvedOptions {
  readonly label: string | null;
  /** Whether the label column was named by the caller (then it must exist). */
  readonly labelRequired: boolean;
  readonly id: string | null;
  readonly exclude: readonly string[];
  /** Explicit features, or null to infer them from the first batch. */
  readonly features: readonly Feature[] | null;
  readonly classes: readonly string[];
  readonly vocabulary: number;
  readonly maxClasses: number;
  readonly missing: readonly string[];
  readonly labelsAs: LabelsAs | null;
}

function isStringList(value: unknown): value is readonly string[] {
  return Array.isArray(value) && value.every((v) => typeof v === 'string');
}

function checkNames(
  issues: ConfigIssue[],
  path: string,
  value: unknown,
  what: string,
): value is readonly string[] {
  if (!isStringList(value)) {
    issues.push({ path, code: 'wrong-type', message: `must be a list of ${what}` });
    return false;
  }
  const seen = new Set<string>();
  value.forEach((name, i) => {
    if (name.length === 0)
      issues.push({ path: `${path}[${i}]`, code: 'wrong-type', message: 'must not be empty' });
    else if (seen.has(name))
      issues.push({ path: `${path}[${i}]`, code: 'duplicate', message: `repeats ${JSON.stringify(name)}` });
    seen.add(name);
  });
  return true;
}

function wholeAtLeast(issues: ConfigIssue[], path: string, value: unknown, min: number): value is number {
  if (typeof value === 'number' && Number.isInteger(value) && value >= min) return true;
  const code =
    typeof value !== 'number' ? 'wrong-type' : Number.isInteger(value) ? 'out-of-range' : 'not-an-integer';
  issues.push({ path, code, message: `must be an integer ≥ ${min}, got ${JSON.stringify(value)}` });
  return false;
}

/** Check one feature of a specification; push its issues and return the feature if it is sound. */
function checkFeature(
  issues: ConfigIssue[],
  path: string,
  spec: unknown,
  vocabulary: number,
): Feature | null {
  if (typeof spec !== 'object' || spec === null) {
    issues.push({ path, code: 'wrong-type', message: 'must be an object with name and kind' });
    return null;
  }
  const { name, kind, categories, values } = spec as Record<string, unknown>;
  const before = issues.length;
  if (typeof name !== 'string' || name.length === 0) {
    issues.push({ path: `${path}.name`, code: 'wrong-type', message: 'must be a non-empty string' });
  }
  if (kind === 'numeric') {
    if (categories !== undefined)
      issues.push({
        path: `${path}.categories`,
        code: 'unknown-setting',
        message: 'only a nominal feature has categories',
      });
    if (values !== undefined)
      issues.push({
        path: `${path}.values`,
        code: 'unknown-setting',
        message: 'only a nominal feature has values',
      });
    return issues.length === before ? { name: name as string, kind: 'numeric', values: 0 } : null;
  }
  if (kind !== 'nominal') {
    issues.push({
      path: `${path}.kind`,
      code: 'not-one-of',
      message: `must be numeric or nominal, got ${JSON.stringify(kind)}`,
    });
    return null;
  }
  const known = categories === undefined ? [] : categories;
  if (categories !== undefined) checkNames(issues, `${path}.categories`, categories, 'category names');
  const count = isStringList(known) ? known.length : 0;
  const codes = values === undefined ? (count > 0 ? count : vocabulary) : values;
  if (wholeAtLeast(issues, `${path}.values`, codes, 2) && codes < count) {
    issues.push({
      path: `${path}.values`,
      code: 'out-of-range',
      message: `is ${codes}, fewer than the ${count} categories listed`,
    });
  }
  if (issues.length !== before) return null;
  return count > 0
    ? { name: name as string, kind: 'nominal', values: codes as number, categories: known as string[] }
    : { name: name as string, kind: 'nominal', values: codes as number };
}

/**
 * Check a list of feature specifications (from options, a config file or a file's own metadata) and
 * return the features; every bad field is listed in one `ConfigError` naming its path.
 */
export function checkFeatureSpecs(
  issues: ConfigIssue[],
  path: string,
  specs: unknown,
  vocabulary: number,
): Feature[] | null {
  if (!Array.isArray(specs)) {
    issues.push({ path, code: 'wrong-type', message: 'must be a list of features' });
    return null;
  }
  const before = issues.length;
  const seen = new Set<string>();
  const features: Feature[] = [];
  specs.forEach((spec, i) => {
    const feature = checkFeature(issues, `${path}[${i}]`, spec, vocabulary);
    const name = (spec as { name?: unknown } | null)?.name;
    if (typeof name === 'string' && seen.has(name)) {
      issues.push({
        path: `${path}[${i}].name`,
        code: 'duplicate',
        message: `repeats ${JSON.stringify(name)}`,
      });
    }
    if (typeof name === 'string') seen.add(name);
    if (feature !== null) features.push(feature);
  });
  return issues.length === before ? features : null;
}

/** Validate frame options; throws a `ConfigError` listing every bad field under `where`. */
export function resolveFrameOptions(options: FrameOptions, where = 'frame options'): ResolvedOptions {
  const issues: ConfigIssue[] = [];
  const o = (options ?? {}) as Record<string, unknown>;
  const label = o.label === undefined ? DEFAULT_LABEL : o.label;
  if (label !== null && (typeof label !== 'string' || label.length === 0)) {
    issues.push({ path: 'label', code: 'wrong-type', message: 'must be a column name or null' });
  }
  if (o.id !== undefined && (typeof o.id !== 'string' || o.id.length === 0)) {
    issues.push({ path: 'id', code: 'wrong-type', message: 'must be a column name' });
  }
  if (o.id !== undefined && o.id === label) {
    issues.push({ path: 'id', code: 'conflict', message: `names the label column ${JSON.stringify(label)}` });
  }
  const exclude = o.exclude ?? [];
  if (checkNames(issues, 'exclude', exclude, 'column names')) {
    exclude.forEach((name, i) => {
      if (name === label || name === o.id) {
        issues.push({
          path: `exclude[${i}]`,
          code: 'conflict',
          message: `excludes the label or id column ${JSON.stringify(name)}`,
        });
      }
    });
  }
  const vocabulary = o.vocabulary ?? DEFAULT_VOCABULARY;
  wholeAtLeast(issues, 'vocabulary', vocabulary, 2);
  const maxClasses = o.maxClasses ?? DEFAULT_MAX_CLASSES;
  wholeAtLeast(issues, 'maxClasses', maxClasses, 2);
  const classes = o.classes ?? [];
  if (checkNames(issues, 'classes', classes, 'class names') && classes.length > (maxClasses as number)) {
    issues.push({
      path: 'classes',
      code: 'out-of-range',
      message: `lists ${classes.length} classes, more than maxClasses`,
    });
  }
  if (o.labelsAs !== undefined && !LABELS_AS.includes(o.labelsAs as LabelsAs)) {
    issues.push({
      path: 'labelsAs',
      code: 'not-one-of',
      message: `must be one of ${LABELS_AS.join(', ')}, got ${JSON.stringify(o.labelsAs)}`,
    });
  }
  const missing = o.missing ?? DEFAULT_MISSING;
  if (!isStringList(missing))
    issues.push({ path: 'missing', code: 'wrong-type', message: 'must be a list of texts' });
  const features =
    o.features === undefined ? null : checkFeatureSpecs(issues, 'features', o.features, vocabulary as number);
  features?.forEach((f, i) => {
    if (f.name === label || f.name === o.id) {
      issues.push({
        path: `features[${i}].name`,
        code: 'conflict',
        message: `names the label or id column ${JSON.stringify(f.name)}`,
      });
    }
    if (Array.isArray(exclude) && exclude.includes(f.name)) {
      issues.push({
        path: `features[${i}].name`,
        code: 'conflict',
        message: `names the excluded column ${JSON.stringify(f.name)}`,
      });
    }
  });
  if (issues.length > 0) throw new ConfigError(where, issues);
  return {
    label: label as string | null,
    labelRequired: o.label !== undefined && o.label !== null && o.labelOptional !== true,
    id: (o.id as string | undefined) ?? null,
    exclude: exclude as readonly string[],
    features,
    classes: classes as readonly string[],
    vocabulary: vocabulary as number,
    maxClasses: maxClasses as number,
    missing: missing as readonly string[],
    labelsAs: (o.labelsAs as ResolvedOptions['labelsAs'] | undefined) ?? null,
  };
}
