/**
 * Single values ("cells") from text and JSON sources, and from Arrow columns that are not read through a
 * typed-array fast path: what type a cell suggests for schema inference, and how it becomes a number or a
 * category name. Text equal to one of the missing-value tokens (by default empty, `NA`, `NaN`, `?` and
 * `null`, as R, spreadsheets and databases write them), JSON null and NaN are missing.
 */

/** The type a column suggests for inference; `other` cannot be a feature (nested values, binary, dates). */
export type ColumnType = 'number' | 'bool' | 'string' | 'empty' | 'other';

/** Numeric labels below this are read as class codes by default; any other label is a class name. */
export const CODE_LIMIT = 1024;

/** Text read as a missing value unless the caller names other tokens. */
export const DEFAULT_MISSING: readonly string[] = ['', 'NA', 'NaN', '?', 'null'];

/** Reads cells with one set of missing-value tokens. */
export class CellReader {
  private readonly missing: ReadonlySet<string>;

  constructor(missing: readonly string[] = DEFAULT_MISSING) {
    this.missing = new Set(missing);
  }

  /** Whether a cell is missing: null, undefined, NaN or a missing-value token. */
  isMissing(value: unknown): boolean {
    if (value === null || value === undefined) return true;
    if (typeof value === 'number') return Number.isNaN(value);
    return typeof value === 'string' && this.missing.has(value);
  }

  /** A numeric cell: the number, NaN when missing, undefined when the cell is not a number. */
  numeric(value: unknown): number | undefined {
    switch (typeof value) {
      case 'number':
        return value;
      case 'string': {
        if (this.missing.has(value)) return Number.NaN;
        if (value.trim().length === 0) return undefined;
        const n = Number(value);
        return Number.isNaN(n) ? undefined : n;
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

  /** A nominal cell: the category name, null when missing, undefined when it cannot name a category. */
  category(value: unknown): string | null | undefined {
    switch (typeof value) {
      case 'string':
        return this.missing.has(value) ? null : value;
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

  /** The type a CSV cell suggests: every cell is text, so numbers and booleans are recognised by form. */
  textType(text: string): ColumnType {
    if (this.missing.has(text)) return 'empty';
    if (text === 'true' || text === 'false') return 'bool';
    return this.numeric(text) === undefined ? 'string' : 'number';
  }

  /**
   * The type a JSON value suggests: a JSON string is a category even when it looks like a number
   * (producers quote codes such as zip codes on purpose); in a numeric column it is still read.
   */
  jsonType(value: unknown): ColumnType {
    if (value === null || value === undefined) return 'empty';
    switch (typeof value) {
      case 'number':
        return 'number';
      case 'boolean':
        return 'bool';
      case 'string':
        return this.missing.has(value) ? 'empty' : 'string';
      default:
        return 'other';
    }
  }
}

/**
 * Why a numeric cell read as `n` (by `CellReader.numeric`) cannot be a feature's value, or null: it is
 * not a number, or it is infinite ("Infinity", 1e999, an Arrow float's ±∞), which would turn a model's
 * statistics into NaN. Missing values (NaN) are fine.
 */
export function numericProblem(n: number | undefined, value: unknown): string | null {
  if (n === undefined) return `expected a number, got ${showCell(value)}`;
  if (n === Number.POSITIVE_INFINITY || n === Number.NEGATIVE_INFINITY) {
    return `expected a finite number, got ${typeof value === 'number' ? String(value) : showCell(value)}`;
  }
  return null;
}

/** Show a refused cell in a message: quoted text, or the JSON of anything else. */
export function showCell(value: unknown): string {
  if (typeof value === 'bigint') return String(value);
  const text = JSON.stringify(value);
  return text === undefined ? String(value) : text.length > 60 ? `${text.slice(0, 57)}...` : text;
}

/**
 * The type of a column from a sample of its cells, by majority, so that a few stray values cannot tip
 * it: a column is nominal (`string`) only when most of its present cells are not numbers; boolean when
 * most of the rest are booleans; `other` (nested JSON) only when nothing else is present. Cells that
 * do not fit the type chosen are rejected row by row later, never re-typed.
 */
export class TypeTally {
  /** Numbers that could be class codes: integers from 0 to `CODE_LIMIT` − 1. */
  codes = 0;
  number = 0;
  bool = 0;
  string = 0;
  other = 0;

  add(type: ColumnType, value?: unknown): void {
    if (type === 'empty') return;
    this[type]++;
    if (type === 'number') {
      const n = Number(value);
      if (Number.isInteger(n) && n >= 0 && n < CODE_LIMIT) this.codes++;
    }
  }

  /** Whether every number seen could be a class code (labels are then read as codes by default). */
  codeLike(): boolean {
    return this.codes === this.number;
  }

  decide(): ColumnType {
    const present = this.number + this.bool + this.string;
    if (present === 0) return this.other > 0 ? 'other' : 'empty';
    if (2 * this.string > present) return 'string';
    return this.bool > this.number ? 'bool' : 'number';
  }
}
