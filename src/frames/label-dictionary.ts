/**
 * The classes of one stream, discovered as labels arrive. A label column holds either class codes
 * (integers 0, 1, …, or booleans as 0 and 1) or class names (strings, coded in order of first
 * appearance after any names given up front). The class list only grows, so codes stay stable for the
 * life of the stream (and across restarts, through the decoder's snapshot). In a regression (`value`,
 * set up front, never guessed) a label is the number to predict and there are no classes.
 */
export type LabelMode = 'code' | 'name' | 'value';

/** Whether a label cell is missing (the decoder's missing-value tokens). */
export type IsMissing = (value: unknown) => boolean;

export class LabelDictionary {
  /** Undecided (null) until a label column's type or its first label says which. */
  mode: LabelMode | null;
  readonly maxClasses: number;
  private readonly list: string[];
  private readonly codes = new Map<string, number>();

  private readonly isMissing: IsMissing;
  /** Whether every name of the full class list is a number (see `namesAreNumbers`); null until asked. */
  private numberNames: boolean | null = null;

  constructor(
    known: readonly string[],
    maxClasses: number,
    isMissing: IsMissing,
    mode: LabelMode | null = null,
  ) {
    this.maxClasses = maxClasses;
    this.isMissing = isMissing;
    this.mode = mode;
    this.list = [];
    for (const name of known) this.add(name);
  }

  /** Class names, index = code; the list grows as classes appear. */
  classes(): readonly string[] {
    return this.list;
  }

  /**
   * Settle the mode from a column's type. A boolean column is a code column whose classes are named
   * `false` and `true` unless names were given.
   */
  decide(kind: 'number' | 'bool' | 'string' | 'empty', codeLike = true): void {
    if (this.mode !== null || kind === 'empty') return;
    this.mode = kind === 'string' || (kind === 'number' && !codeLike) ? 'name' : 'code';
    if (kind === 'bool' && this.list.length === 0) {
      this.add('false');
      this.add('true');
    }
  }

  /** The code of a numeric label: an integer in [0, maxClasses); −1 otherwise. */
  codeOfNumber(value: number): number {
    if (!(Number.isInteger(value) && value >= 0 && value < this.maxClasses)) return -1;
    while (this.list.length <= value) this.add(String(this.list.length));
    return value;
  }

  /** The code of a class name, adding it while there is room; −1 when the class list is full. */
  codeOfName(name: string): number {
    const found = this.codes.get(name);
    if (found !== undefined) return found;
    if (this.list.length >= this.maxClasses) return -1;
    return this.add(name);
  }

  /**
   * What a label cell of any source holds: its class code (or, in a regression, its number); NaN for
   * a missing label (null, undefined, NaN, a missing-value token); undefined for a value that is not a
   * label (see `explain`).
   */
  read(value: unknown): number | undefined {
    if (this.mode !== 'value') {
      const code = this.code(value);
      return code === -1 ? undefined : code;
    }
    if (this.isMissing(value)) return Number.NaN;
    const n =
      typeof value === 'number'
        ? value
        : typeof value === 'bigint'
          ? Number(value)
          : typeof value === 'string' && value.trim() !== ''
            ? Number(value)
            : Number.NaN;
    return Number.isFinite(n) ? n : undefined;
  }

  /**
   * The code of a label cell of any source: NaN for a missing label (null, undefined, NaN, a missing-value token), −1
   * for a value that is not a label (see `explain`).
   */
  code(value: unknown): number {
    if (this.isMissing(value)) return Number.NaN;
    if (this.mode === null) this.mode = typeof value === 'string' && !isCodeText(value) ? 'name' : 'code';
    if (this.mode === 'name') {
      return typeof value === 'object' ? -1 : this.codeOfName(String(value));
    }
    if (typeof value === 'number') return this.codeOfNumber(value);
    if (typeof value === 'boolean') return this.codeOfNumber(value ? 1 : 0);
    if (typeof value === 'bigint') return this.codeOfNumber(Number(value));
    if (typeof value === 'string') {
      if (value === 'true' || value === 'false') return this.codeOfNumber(value === 'true' ? 1 : 0);
      const n = Number(value);
      if (value.trim() !== '' && Number.isInteger(n)) return this.codeOfNumber(n);
    }
    return -1;
  }

  /** Why `value` has no code; built only when a label is refused. */
  explain(value: unknown): string {
    const shown = typeof value === 'bigint' ? String(value) : JSON.stringify(value);
    if (this.mode === 'value')
      return `label ${shown} is not a number (labels are read as regression targets)`;
    if (this.mode === 'name' && typeof value !== 'object') {
      const full = `label ${shown} would be class ${this.list.length + 1}, more than maxClasses (${this.maxClasses})`;
      // A label column of prices or durations reads as class names until the class list is full.
      return isNumberText(String(value)) && this.namesAreNumbers()
        ? `${full}; every label so far is a number: to predict numbers, set task: regression (--task regression)`
        : full;
    }
    return `label ${shown} is not a class code (an integer from 0 to ${this.maxClasses - 1}); set inputs.labelsAs: class-names (--labels-as class-names) to read labels as names`;
  }

  /**
   * Whether every class name reads as a number: asked once the list is full, which it then stays, so
   * a run refusing every further row (with `--rejects`) reads the names once, not once a row.
   */
  private namesAreNumbers(): boolean {
    if (this.numberNames !== null) return this.numberNames;
    const numbers = this.list.every(isNumberText);
    if (this.list.length >= this.maxClasses) this.numberNames = numbers;
    return numbers;
  }

  private add(name: string): number {
    const code = this.list.length;
    this.list.push(name);
    this.codes.set(name, code);
    return code;
  }
}

/** Text that reads as a finite number. */
function isNumberText(text: string): boolean {
  return text.trim() !== '' && Number.isFinite(Number(text));
}

/** Text that reads as a non-negative integer, such as a class code in a CSV cell. */
function isCodeText(text: string): boolean {
  return /^\s*\d+\s*$/.test(text);
}
