import {
  type ChangePoints,
  checkSchema,
  type FeatureSchema,
  integerAtLeast,
  oneOf,
  ShoalError,
} from '../core/index.js';
import { DEFAULT_LABEL } from './options.js';

/** The file formats Shoal reads and writes. */
export type FrameFormat = 'arrow' | 'csv' | 'ndjson';

/**
 * Rows to write: `rows` rows of the schema's width, row-major, and their labels (NaN = no label). A
 * `Frame` is a `RowBlock`, and so is a generator's block with its labels.
 */
export interface RowBlock {
  readonly rows: number;
  readonly values: Float64Array;
  readonly labels: ArrayLike<number> | null;
  readonly ids?: readonly string[] | null;
}

/** What a writer writes: the features (nominal codes are written as their category names) and classes. */
export interface WriterOptions {
  readonly schema: FeatureSchema;
  /** Class names, index = label code. */
  readonly classes: readonly string[];
  /** Name of the label column (default `label`). */
  readonly label?: string;
  /** Write each label as its class name (the default) or as its integer code. */
  readonly labels?: 'name' | 'code';
  /** Name of an id column; every block must then carry ids. */
  readonly id?: string;
  /** Rows per Arrow record batch (default 10,000). */
  readonly batchRows?: number;
  /** The stream's true change points, recorded in an Arrow file's schema metadata (`CHANGES_KEY`). */
  readonly changes?: ChangePoints;
}

/**
 * A writer of one file. Blocks of any size may be written; `close` must be awaited to finish the file
 * (the Arrow file format ends with a footer).
 *
 * @example
 * const writer = await createWriter('sea.arrow', 'arrow', { schema: gen.schema, classes: gen.classes });
 * await writer.write({ rows: 1000, values: block.rows, labels: block.labels });
 * await writer.close();
 */
export interface FrameWriter {
  readonly path: string;
  /** Rows written so far. */
  readonly rowsWritten: number;
  write(block: RowBlock): Promise<void>;
  close(): Promise<void>;
}

export const DEFAULT_WRITE_BATCH_ROWS = 10_000;

/** Writer options after validation: how each value and label is written. */
export class WriterPlan {
  readonly schema: FeatureSchema;
  readonly width: number;
  readonly classes: readonly string[];
  readonly label: string;
  readonly labelsAsCodes: boolean;
  readonly id: string | null;
  readonly batchRows: number;
  /** Category names per feature (null for numeric), index = code; unnamed codes are written as numbers. */
  readonly categories: readonly (readonly string[] | null)[];

  constructor(options: WriterOptions) {
    const owner = 'writer';
    this.schema = checkSchema(owner, options.schema);
    this.width = this.schema.features.length;
    this.classes = options.classes;
    this.label = options.label ?? DEFAULT_LABEL;
    this.labelsAsCodes =
      oneOf(owner, 'labels', options.labels ?? 'name', ['name', 'code'] as const) === 'code';
    this.id = options.id ?? null;
    this.batchRows = integerAtLeast(owner, 'batchRows', options.batchRows ?? DEFAULT_WRITE_BATCH_ROWS);
    this.categories = this.schema.features.map((f) =>
      f.kind === 'nominal'
        ? Array.from({ length: f.values }, (_, c) => f.categories?.[c] ?? String(c))
        : null,
    );
    const names = [
      ...(this.id === null ? [] : [this.id]),
      ...this.schema.features.map((f) => f.name),
      this.label,
    ];
    const repeated = names.find((n, i) => names.indexOf(n) !== i);
    if (repeated !== undefined) {
      throw new ShoalError(
        'invalid-parameter',
        `writer: column name ${JSON.stringify(repeated)} is used twice`,
      );
    }
  }

  /** Column names in file order: id (if any), the features, the label. */
  columns(): string[] {
    return [...(this.id === null ? [] : [this.id]), ...this.schema.features.map((f) => f.name), this.label];
  }

  /** Check a block before any of it is written: sizes, category codes, label codes, ids. */
  check(block: RowBlock, path: string): void {
    const { rows, values, labels } = block;
    const fail = (code: 'invalid-row' | 'invalid-label', what: string): never => {
      throw new ShoalError(code, `${path}: ${what}`);
    };
    if (!(Number.isInteger(rows) && rows >= 0 && values.length >= rows * this.width)) {
      fail('invalid-row', `a block of ${rows} rows needs ${rows * this.width} values, got ${values.length}`);
    }
    if (labels !== null && labels.length < rows)
      fail('invalid-label', `${rows} rows but ${labels.length} labels`);
    if (this.id !== null && !(block.ids && block.ids.length >= rows)) {
      fail('invalid-row', `the id column ${JSON.stringify(this.id)} needs an id for each of ${rows} rows`);
    }
    for (let j = 0; j < this.width; j++) {
      const names = this.categories[j];
      if (names === null || names === undefined) continue;
      for (let r = 0; r < rows; r++) {
        const code = values[r * this.width + j]!;
        if (!Number.isNaN(code) && !(Number.isInteger(code) && code >= 0 && code < names.length)) {
          fail(
            'invalid-row',
            `row ${r}: ${JSON.stringify(this.schema.features[j]!.name)} has code ${code}, not in 0 … ${names.length - 1}`,
          );
        }
      }
    }
    if (labels === null) return;
    const limit = this.labelsAsCodes ? 0x7fffffff : this.classes.length;
    for (let r = 0; r < rows; r++) {
      const code = labels[r]!;
      if (!Number.isNaN(code) && !(Number.isInteger(code) && code >= 0 && code < limit)) {
        fail('invalid-label', `row ${r}: label ${code} is not a class code in 0 … ${limit - 1}`);
      }
    }
  }

  /** The text of a label (its class name or code); null for a missing label. */
  labelText(code: number): string | null {
    if (Number.isNaN(code)) return null;
    return this.labelsAsCodes ? String(code) : this.classes[code]!;
  }
}

/** How a text format writes its header and its rows. */
export interface TextLayout {
  /** The first line (without its line break), or null for none. */
  header(plan: WriterPlan): string | null;
  /** Row r of a checked block as one line (without its line break). */
  row(plan: WriterPlan, block: RowBlock, r: number): string;
}
