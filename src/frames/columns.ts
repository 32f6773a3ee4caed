import type { Feature } from '../core/index.js';
import type { ColumnType } from './cells.js';
import type { ResolvedOptions } from './options.js';

/** A column as a source presents it: its name, the type it suggests, and that type in words. */
export interface SourceColumn {
  readonly name: string;
  readonly type: ColumnType;
  /** For a numeric column: whether every value seen could be a class code (absent: assume so). */
  readonly codeLike?: boolean;
  /** The source's own name for the type (an Arrow type, `JSON object`), for messages. */
  readonly detail: string;
}

/** Which source column feeds each feature, the label and the id (−1: none). */
export interface Binding {
  readonly names: readonly string[];
  readonly features: Int32Array;
  readonly label: number;
  readonly id: number;
}

/** Why a source's columns could not be bound: a named column is absent, or a column cannot be read. */
export interface BindProblem {
  readonly code: 'not-found' | 'invalid-input';
  readonly reason: string;
}

/** The result of binding a source's columns: the binding and, when inferred, the features. */
export interface BoundColumns {
  readonly binding: Binding;
  readonly features: readonly Feature[];
  /** Type of the label column, which settles whether labels are codes or names. */
  readonly labelType: ColumnType;
  /** Whether the label column's numbers could all be class codes. */
  readonly labelCodes: boolean;
}

function listColumns(names: readonly string[]): string {
  const shown = names.slice(0, 20).map((n) => JSON.stringify(n));
  return names.length > 20 ? `${shown.join(', ')}, … (${names.length} columns)` : shown.join(', ');
}

function notReadable(column: SourceColumn): BindProblem {
  return {
    code: 'invalid-input',
    reason: `column ${JSON.stringify(column.name)} has type ${column.detail}, which cannot be a feature (exclude it)`,
  };
}

/** The feature a column of the given type becomes when the schema is inferred. */
function inferFeature(name: string, type: ColumnType, vocabulary: number): Feature {
  if (type === 'bool') return { name, kind: 'nominal', values: 2, categories: ['false', 'true'] };
  if (type === 'string') return { name, kind: 'nominal', values: vocabulary };
  return { name, kind: 'numeric', values: 0 };
}

/**
 * Bind a source's columns to the roles the options give them. `features` are the stream's features
 * when they are already known (given explicitly, or inferred from an earlier batch); null infers them
 * from these columns. Returns the problem as a value when a named column is absent or a column cannot
 * be read, so that a message decoder can reject one message without throwing.
 */
export function bindColumns(
  columns: readonly SourceColumn[],
  options: ResolvedOptions,
  features: readonly Feature[] | null,
): BoundColumns | BindProblem {
  const names = columns.map((c) => c.name);
  const index = new Map<string, number>();
  for (let i = 0; i < names.length; i++) {
    if (index.has(names[i]!)) {
      return { code: 'invalid-input', reason: `column ${JSON.stringify(names[i])} appears twice` };
    }
    index.set(names[i]!, i);
  }
  const absent = (shown: string, role: string): BindProblem => ({
    code: 'not-found',
    reason: `no column ${shown} ${role}; the columns are ${listColumns(names)}`,
  });
  const label = options.label === null ? -1 : (index.get(options.label) ?? -1);
  if (label < 0 && options.labelRequired) return absent(JSON.stringify(options.label), 'for the label');
  const id = options.id === null ? -1 : (index.get(options.id) ?? -1);
  if (id < 0 && options.id !== null) return absent(JSON.stringify(options.id), 'for the id');
  const missingExcluded = options.exclude.find((name) => !index.has(name));
  if (missingExcluded !== undefined) return absent(JSON.stringify(missingExcluded), 'to exclude');

  let bound: readonly Feature[];
  if (features === null) {
    const skip = new Set([options.label, options.id, ...options.exclude]);
    // A first column without a name is a row index: pandas' `to_csv` and R's `write.csv` write their
    // row labels there by default. It counts rows, so as a feature it would only teach the row order.
    const chosen = columns.filter((c, i) => !skip.has(c.name) && !(i === 0 && c.name === ''));
    const unreadable = chosen.find((c) => c.type === 'other');
    if (unreadable !== undefined) return notReadable(unreadable);
    bound = chosen.map((c) => inferFeature(c.name, c.type, options.vocabulary));
  } else {
    const missing = features.filter((f) => !index.has(f.name)).map((f) => JSON.stringify(f.name));
    if (missing.length > 0) {
      const role = missing.length === 1 ? 'a feature' : 'features';
      return absent(missing.join(', '), `for ${role}`);
    }
    const unreadable = features.map((f) => columns[index.get(f.name)!]!).find((c) => c.type === 'other');
    if (unreadable !== undefined) return notReadable(unreadable);
    bound = features;
  }
  const binding: Binding = {
    names,
    features: Int32Array.from(bound, (f) => index.get(f.name)!),
    label,
    id,
  };
  return {
    binding,
    features: bound,
    labelType: label < 0 ? 'empty' : columns[label]!.type,
    labelCodes: label < 0 || columns[label]!.codeLike !== false,
  };
}
