/**
 * Single values ("cells") from text and JSON sources, and from Arrow columns that are not read through a
 * typed-array fast path: what type a cell suggests for schema inference, and how it becomes a number or a
 * category name. Empty text, null and NaN are missing.
 */

/** The type a column suggests for inference; `other` cannot be a feature (nested values, binary, dates). */
export type ColumnType = 'number' | 'bool' | 'string' | 'empty' | 'other';

/** A numeric cell: the number, NaN when missing, undefined when the cell is not a number. */
export function numericCell(value: unknown): number | undefined {
  switch (typeof value) {
    case 'number':
      return value;
    case 'string': {
      if (value.length === 0 || value === 'NaN') return Number.NaN;
      const n = Number(value);
      if (Number.isNaN(n)) return undefined;
      return n === 0 && value.trim().length === 0 ? Number.NaN : n;
    }
    case 'boolean':
      return value ? 1 : 0;
    case 'bigint':
      return Number(value);
    case 'undefined':
      return Number.NaN;
    default:
      return value === null ? Number.NaN : undefined;
  }
}

/** A nominal cell: the category name, null when missing, undefined when the cell cannot name a category. */
export function categoryCell(value: unknown): string | null | undefined {
  switch (typeof value) {
    case 'string':
      return value.length === 0 ? null : value;
    case 'number':
      return Number.isNaN(value) ? null : String(value);
    case 'boolean':
    case 'bigint':
      return String(value);
    case 'undefined':
      return null;
    default:
      return value === null ? null : undefined;
  }
}

/** Show a refused cell in a message: quoted text, or the JSON of anything else. */
export function showCell(value: unknown): string {
  if (typeof value === 'bigint') return String(value);
  const text = JSON.stringify(value);
  return text === undefined ? String(value) : text.length > 60 ? `${text.slice(0, 57)}...` : text;
}

/** The type a CSV cell suggests: every cell is text, so numbers and booleans are recognised by form. */
export function textCellType(text: string): ColumnType {
  if (text.length === 0 || text === 'NaN') return 'empty';
  if (text === 'true' || text === 'false') return 'bool';
  const n = numericCell(text);
  if (n === undefined) return 'string';
  return Number.isNaN(n) ? 'empty' : 'number';
}

/** The type a JSON value suggests: a JSON string is a category even when it looks like a number. */
export function jsonCellType(value: unknown): ColumnType {
  if (value === null || value === undefined || value === '') return 'empty';
  switch (typeof value) {
    case 'number':
      return 'number';
    case 'boolean':
      return 'bool';
    case 'string':
      return 'string';
    default:
      return 'other';
  }
}

/**
 * The type of a column from the types of two parts of it: text wins over numbers and booleans; values
 * that cannot be features (JSON objects) count only when there is nothing else, so that a stray object
 * is refused as a bad row rather than making the whole column unreadable.
 */
export function mergeTypes(a: ColumnType, b: ColumnType): ColumnType {
  if (a === b || b === 'empty' || b === 'other') return a === 'empty' ? b : a;
  if (a === 'empty' || a === 'other') return b;
  return 'string';
}
