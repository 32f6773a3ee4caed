import {
  type Data,
  type DataType,
  Dictionary,
  Field,
  Float64,
  Int32,
  makeData,
  RecordBatch,
  RecordBatchStreamWriter,
  Schema,
  Struct,
  Utf8,
  type Vector,
  vectorFromArray,
} from 'apache-arrow';
import type { ChangePoints, FeatureSchema } from '../core/index.js';
import { CHANGES_KEY, CLASSES_KEY, FEATURES_KEY } from './arrow-batch.js';

/**
 * How Shoal lays rows out as Arrow record batches, for the file writer and for Kafka messages alike:
 * the id as utf8, numeric features as float64, nominal features as dictionary-encoded strings (the
 * dictionary is the category names in code order), the label as a dictionary of class names or an
 * int32 code (or no label column at all), missing values as nulls (Apache Arrow Columnar Format,
 * "Validity bitmaps", LSB bit order). The schema metadata records the features and classes
 * (`shoal.features`, `shoal.classes`), so a reader gets the same codes back, and a generated stream's
 * true change points when given (`shoal.changes`).
 *
 * @example
 * const layout = new ArrowLayout({ id: 'leg_id', schema, categories, label: null, classes, labelsAsCodes: false });
 * const bytes = arrowStream(layout.batch(rows, values, null, ids));
 */
export interface ArrowLayoutOptions {
  /** The id column's name, or null for none. */
  readonly id: string | null;
  /** The features (may be empty: a labels message holds only ids and labels). */
  readonly schema: FeatureSchema;
  /** Category names per feature (null for numeric), index = code. */
  readonly categories: readonly (readonly string[] | null)[];
  /** The label column's name, or null to leave the label out (events whose labels come later). */
  readonly label: string | null;
  /** Class names, index = label code. */
  readonly classes: readonly string[];
  /** Write labels as int32 codes instead of class names. */
  readonly labelsAsCodes: boolean;
  /** The stream's true change points, recorded in the schema metadata (`shoal.changes`). */
  readonly changes?: ChangePoints;
}

export class ArrowLayout {
  readonly schema: Schema;
  private readonly fields: Field[] = [];
  private readonly dictionaries: (Vector | null)[] = [];
  private readonly labelDictionary: Vector | null;
  private readonly width: number;
  private readonly options: ArrowLayoutOptions;

  constructor(options: ArrowLayoutOptions) {
    this.options = options;
    const features = options.schema.features;
    this.width = features.length;
    if (options.id !== null) this.fields.push(new Field(options.id, new Utf8(), false));
    features.forEach((f, j) => {
      const categories = options.categories[j];
      if (categories === null || categories === undefined) {
        this.fields.push(new Field(f.name, new Float64(), true));
        this.dictionaries.push(null);
      } else {
        this.fields.push(new Field(f.name, new Dictionary(new Utf8(), new Int32(), j), true));
        this.dictionaries.push(vectorFromArray(categories as string[], new Utf8()));
      }
    });
    this.labelDictionary =
      options.labelsAsCodes || options.label === null
        ? null
        : vectorFromArray(options.classes as string[], new Utf8());
    if (options.label !== null) {
      this.fields.push(
        new Field(
          options.label,
          this.labelDictionary === null ? new Int32() : new Dictionary(new Utf8(), new Int32(), this.width),
          true,
        ),
      );
    }
    const specs = features.map((f) =>
      f.kind === 'numeric'
        ? { name: f.name, kind: f.kind }
        : {
            name: f.name,
            kind: f.kind,
            values: f.values,
            ...(f.categories ? { categories: f.categories } : {}),
          },
    );
    const metadata = new Map<string, string>();
    if (specs.length > 0) metadata.set(FEATURES_KEY, JSON.stringify(specs));
    metadata.set(CLASSES_KEY, JSON.stringify(options.classes));
    if (options.changes !== undefined) metadata.set(CHANGES_KEY, JSON.stringify(options.changes));
    this.schema = new Schema(this.fields, metadata);
  }

  /**
   * One record batch of `rows` rows: `values` row-major with the features' width, `labels` one code per
   * row (NaN: missing; ignored without a label column), `ids` one per row when there is an id column.
   */
  batch(
    rows: number,
    values: Float64Array,
    labels: Float64Array | null,
    ids: readonly string[] | null,
  ): RecordBatch {
    const width = this.width;
    const children: Data[] = [];
    if (this.options.id !== null) children.push(vectorFromArray(ids!.slice(0, rows), new Utf8()).data[0]!);
    for (let j = 0; j < width; j++) {
      const column = new Float64Array(rows);
      for (let r = 0; r < rows; r++) column[r] = values[r * width + j]!;
      const dictionary = this.dictionaries[j]!;
      if (dictionary !== null) {
        children.push(codeColumn(this.fields[children.length]!.type, column, rows, dictionary));
        continue;
      }
      const v = validity(rows, (r) => !Number.isNaN(column[r]!));
      children.push(
        makeData({
          type: new Float64(),
          length: rows,
          nullCount: v?.nulls ?? 0,
          nullBitmap: v?.bitmap ?? null,
          data: column,
        }),
      );
    }
    if (this.options.label !== null) {
      const codes = labels === null ? new Float64Array(rows).fill(Number.NaN) : labels.subarray(0, rows);
      children.push(codeColumn(this.fields[children.length]!.type, codes, rows, this.labelDictionary));
    }
    const data = makeData({ type: new Struct(this.fields), length: rows, nullCount: 0, children });
    return new RecordBatch(this.schema, data);
  }
}

/** A record batch as one Arrow IPC stream (schema, dictionaries, the batch, end marker): one message's value. */
export function arrowStream(batch: RecordBatch): Uint8Array {
  return RecordBatchStreamWriter.writeAll([batch]).toUint8Array(true);
}

/** A validity bitmap (LSB bit order) with bit r set where `valid(r)`; null when every row is valid. */
function validity(rows: number, valid: (r: number) => boolean): { bitmap: Uint8Array; nulls: number } | null {
  let nulls = 0;
  for (let r = 0; r < rows; r++) if (!valid(r)) nulls++;
  if (nulls === 0) return null;
  const bitmap = new Uint8Array((rows + 7) >> 3);
  for (let r = 0; r < rows; r++) if (valid(r)) bitmap[r >> 3]! |= 1 << (r & 7);
  return { bitmap, nulls };
}

/** A column of codes (Int32) with an optional dictionary: nominal features and named labels. */
function codeColumn(type: DataType, codes: Float64Array, rows: number, dictionary: Vector | null): Data {
  const keys = new Int32Array(rows);
  for (let r = 0; r < rows; r++) keys[r] = Number.isNaN(codes[r]!) ? 0 : codes[r]!;
  const v = validity(rows, (r) => !Number.isNaN(codes[r]!));
  return makeData({
    type: type as Dictionary<Utf8, Int32>,
    length: rows,
    nullCount: v?.nulls ?? 0,
    nullBitmap: v?.bitmap ?? null,
    data: keys,
    ...(dictionary === null ? {} : { dictionary }),
  });
}
