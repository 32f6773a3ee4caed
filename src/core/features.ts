import { ShoalError } from './errors.js';

/**
 * What a row holds. A row is `width` consecutive doubles in a row-major `Float64Array`; a numeric
 * feature is its value (NaN = missing), a nominal feature is a category code 0 … values−1 (NaN = missing).
 * The number of codes of a nominal feature is fixed when the schema is made: readers keep a bounded
 * vocabulary whose last code is an overflow bucket, so learners can size their tables once.
 */

export type FeatureKind = 'numeric' | 'nominal';

export interface Feature {
  readonly name: string;
  readonly kind: FeatureKind;
  /** Number of category codes of a nominal feature (including any overflow bucket); 0 for numeric. */
  readonly values: number;
  /** Optional names of the category codes, index = code. */
  readonly categories?: readonly string[];
}

export interface FeatureSchema {
  readonly features: readonly Feature[];
}

export function numeric(name: string): Feature {
  return { name, kind: 'numeric', values: 0 };
}

export function nominal(name: string, categories: readonly string[] | number): Feature {
  return typeof categories === 'number'
    ? { name, kind: 'nominal', values: categories }
    : { name, kind: 'nominal', values: categories.length, categories };
}

/** A schema of `count` numeric features named `${prefix}0 …`. */
export function numericSchema(count: number, prefix = 'x'): FeatureSchema {
  return { features: Array.from({ length: count }, (_, i) => numeric(`${prefix}${i}`)) };
}

/** Check a schema once, where it enters a learner or detector; returns it unchanged. */
export function checkSchema(owner: string, schema: FeatureSchema): FeatureSchema {
  if (!schema || !Array.isArray(schema.features) || schema.features.length === 0) {
    throw new ShoalError('invalid-parameter', `${owner}: schema must list at least one feature`);
  }
  schema.features.forEach((f, i) => {
    if (f.kind === 'nominal') {
      if (!(Number.isInteger(f.values) && f.values >= 1)) {
        throw new ShoalError(
          'invalid-parameter',
          `${owner}: schema.features[${i}] (${f.name}) is nominal and needs values ≥ 1, got ${f.values}`,
        );
      }
    } else if (f.kind !== 'numeric') {
      throw new ShoalError(
        'invalid-parameter',
        `${owner}: schema.features[${i}] (${f.name}) has kind ${String(f.kind)}, expected numeric or nominal`,
      );
    }
  });
  return schema;
}

/**
 * The true change points of a generated stream, as `shoal spawn` records them in the file it writes
 * and a replay's journal carries them: where each concept after the first begins.
 */
export interface ChangePoints {
  /** Row index (from 0) of each change: the first row of the new concept, the midpoint of a blended one. */
  readonly rows: readonly number[];
  /** The concepts in the order they take turns: one more than the change points. */
  readonly concepts: readonly string[];
  /** Rows over which each change blends in (0: abrupt). */
  readonly width: number;
}

/**
 * Check a value read back from a file or a journal as `ChangePoints`: a message naming the first
 * problem, or the value typed.
 */
export function readChangePoints(value: unknown): ChangePoints | string {
  if (typeof value !== 'object' || value === null) return 'expected an object with rows, concepts and width';
  const { rows, concepts, width } = value as Record<string, unknown>;
  if (!Array.isArray(rows) || !rows.every((r) => Number.isInteger(r) && (r as number) >= 0))
    return 'rows must be a list of row indices (integers ≥ 0)';
  if (rows.some((r, i) => i > 0 && (r as number) <= (rows[i - 1] as number))) return 'rows must increase';
  if (!Array.isArray(concepts) || !concepts.every((c) => typeof c === 'string'))
    return 'concepts must be a list of names';
  if (concepts.length !== rows.length + 1)
    return `concepts must name ${rows.length + 1} concepts (one more than the rows), got ${concepts.length}`;
  if (typeof width !== 'number' || !(width >= 0)) return 'width must be a number ≥ 0';
  return { rows: rows as number[], concepts: concepts as string[], width };
}
