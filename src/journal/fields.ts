import { ShoalError } from '../core/index.js';

export function isObject(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

export function show(value: unknown): string {
  const text = value === undefined ? 'nothing' : JSON.stringify(value);
  return text.length > 60 ? `${text.slice(0, 57)}...` : text;
}

/** The fields of one JSON object, read with checks; `what` locates it in messages. */
export class Fields {
  readonly value: Record<string, unknown>;
  private readonly what: string;
  private readonly path: string;

  constructor(value: Record<string, unknown>, what: string, path = '') {
    this.value = value;
    this.what = what;
    this.path = path;
  }

  fail(key: string, expected: string, got: unknown): never {
    throw new ShoalError(
      'invalid-input',
      `${this.what}: ${this.path}${key} must be ${expected}, got ${show(got)}`,
    );
  }

  raw(key: string): unknown {
    return this.value[key];
  }

  string(key: string): string {
    const v = this.value[key];
    return typeof v === 'string' ? v : this.fail(key, 'a string', v);
  }

  integer(key: string, min: number, max = Number.MAX_SAFE_INTEGER): number {
    const v = this.value[key];
    if (typeof v === 'number' && Number.isInteger(v) && v >= min && v <= max) return v;
    return this.fail(
      key,
      max === Number.MAX_SAFE_INTEGER ? `an integer ≥ ${min}` : `an integer in [${min}, ${max}]`,
      v,
    );
  }

  atLeastZero(key: string): number {
    const v = this.value[key];
    return typeof v === 'number' && v >= 0 ? v : this.fail(key, 'a number ≥ 0', v);
  }

  numberOrNull(key: string): number | null {
    const v = this.value[key];
    return v === null || typeof v === 'number' ? v : this.fail(key, 'a number or null', v);
  }

  numberOrNaN(key: string): number {
    return this.numberOrNull(key) ?? Number.NaN;
  }

  oneOf<T extends string>(key: string, choices: readonly T[]): T {
    const v = this.value[key];
    return (choices as readonly unknown[]).includes(v)
      ? (v as T)
      : this.fail(key, `one of ${choices.join(', ')}`, v);
  }

  object(key: string): Fields {
    const v = this.value[key];
    return isObject(v) ? new Fields(v, this.what, `${this.path}${key}.`) : this.fail(key, 'an object', v);
  }

  private array(key: string): readonly unknown[] {
    const v = this.value[key];
    return Array.isArray(v) ? v : this.fail(key, 'an array', v);
  }

  objects(key: string): Fields[] {
    return this.array(key).map((v, i) =>
      isObject(v)
        ? new Fields(v, this.what, `${this.path}${key}[${i}].`)
        : this.fail(`${key}[${i}]`, 'an object', v),
    );
  }

  strings(key: string): string[] {
    return this.array(key).map((v, i) =>
      typeof v === 'string' ? v : this.fail(`${key}[${i}]`, 'a string', v),
    );
  }

  optionalStrings(key: string): string[] | undefined {
    return this.value[key] === undefined ? undefined : this.strings(key);
  }

  numbersOrNaN(key: string): number[] {
    return this.array(key).map((v, i) =>
      v === null ? Number.NaN : typeof v === 'number' ? v : this.fail(`${key}[${i}]`, 'a number or null', v),
    );
  }

  /** A square matrix of counts (numbers ≥ 0). */
  matrix(key: string): number[][] {
    const rows = this.array(key);
    return rows.map((row, r) => {
      if (!Array.isArray(row) || row.length !== rows.length) {
        this.fail(`${key}[${r}]`, `a row of ${rows.length} counts (a square matrix)`, row);
      }
      return row.map((v: unknown, c) =>
        typeof v === 'number' && v >= 0 ? v : this.fail(`${key}[${r}][${c}]`, 'a count ≥ 0', v),
      );
    });
  }
}
