import type { FileHandle } from 'node:fs/promises';
import {
  AsyncByteQueue,
  type Data,
  type DataType,
  Dictionary,
  Field,
  Float64,
  Int32,
  makeData,
  RecordBatch,
  RecordBatchFileWriter,
  Schema,
  Struct,
  Utf8,
  type Vector,
  vectorFromArray,
} from 'apache-arrow';
import { ShoalError } from '../core/index.js';
import {
  CHANGES_KEY,
  CLASSES_KEY,
  FEATURES_KEY,
  type FrameWriter,
  type RowBlock,
  type WriterOptions,
  WriterPlan,
} from '../frames/index.js';
import { createFile } from './output-file.js';

/**
 * The bytes Arrow's writer produces, collected in order instead of queued for a reader, so that each
 * record batch goes to disk (awaited) before the next is built and memory stays bounded.
 */
class CollectedBytes extends AsyncByteQueue {
  chunks: Uint8Array[] = [];
  override write(value: Uint8Array): void {
    if (value.byteLength > 0) this.chunks.push(value);
  }
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

/**
 * An Arrow IPC file writer (Apache Arrow, "IPC File Format"): record batches of `batchRows` rows
 * (10,000 by default). Numeric features are float64, nominal features dictionary-encoded strings
 * (the dictionary is the category names in code order), the label a dictionary of class names or an
 * int32 code, the id utf8; missing values are nulls. The schema metadata records the features and
 * classes (`shoal.features`, `shoal.classes`), so that reading the file back gives the same codes, and
 * the stream's true change points when given (`shoal.changes`).
 *
 * @example
 * const writer = await createArrowWriter('sea.arrow', { schema: gen.schema, classes: gen.classes });
 */
export async function createArrowWriter(path: string, options: WriterOptions): Promise<FrameWriter> {
  const plan = new WriterPlan(options);
  const { width, batchRows, schema: features } = plan;
  const fields: Field[] = [];
  const dictionaries: (Vector | null)[] = [];
  if (plan.id !== null) fields.push(new Field(plan.id, new Utf8(), false));
  features.features.forEach((f, j) => {
    const categories = plan.categories[j];
    if (categories === null || categories === undefined) {
      fields.push(new Field(f.name, new Float64(), true));
      dictionaries.push(null);
    } else {
      fields.push(new Field(f.name, new Dictionary(new Utf8(), new Int32(), j), true));
      dictionaries.push(vectorFromArray(categories as string[], new Utf8()));
    }
  });
  const labelDictionary = plan.labelsAsCodes ? null : vectorFromArray(plan.classes as string[], new Utf8());
  fields.push(
    new Field(
      plan.label,
      labelDictionary === null ? new Int32() : new Dictionary(new Utf8(), new Int32(), width),
      true,
    ),
  );
  const specs = features.features.map((f) =>
    f.kind === 'numeric'
      ? { name: f.name, kind: f.kind }
      : {
          name: f.name,
          kind: f.kind,
          values: f.values,
          ...(f.categories ? { categories: f.categories } : {}),
        },
  );
  const schema = new Schema(
    fields,
    new Map([
      [FEATURES_KEY, JSON.stringify(specs)],
      [CLASSES_KEY, JSON.stringify(plan.classes)],
      ...(options.changes === undefined ? [] : [[CHANGES_KEY, JSON.stringify(options.changes)] as const]),
    ]),
  );

  const handle: FileHandle = await createFile(path);
  const sink = new CollectedBytes();
  const writer = new RecordBatchFileWriter();
  writer.reset(sink, schema);
  const pendingValues = new Float64Array(batchRows * width);
  const pendingLabels = new Float64Array(batchRows);
  let pendingIds: string[] = [];
  let pending = 0;
  let rowsWritten = 0;
  let closed = false;

  const drain = async (): Promise<void> => {
    const chunks = sink.chunks;
    sink.chunks = [];
    if (chunks.length > 0) await handle.writev(chunks);
  };

  const flush = async (): Promise<void> => {
    if (pending === 0) return;
    const rows = pending;
    const children: Data[] = [];
    if (plan.id !== null) children.push(vectorFromArray(pendingIds, new Utf8()).data[0]!);
    features.features.forEach((_, j) => {
      const column = new Float64Array(rows);
      for (let r = 0; r < rows; r++) column[r] = pendingValues[r * width + j]!;
      const dictionary = dictionaries[j]!;
      if (dictionary !== null) {
        children.push(codeColumn(fields[children.length]!.type, column, rows, dictionary));
        return;
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
    });
    children.push(
      codeColumn(fields[children.length]!.type, pendingLabels.subarray(0, rows), rows, labelDictionary),
    );
    const data = makeData({ type: new Struct(fields), length: rows, nullCount: 0, children });
    writer.write(new RecordBatch(schema, data));
    pending = 0;
    pendingIds = [];
    await drain();
  };

  return {
    path,
    get rowsWritten() {
      return rowsWritten;
    },
    async write(block: RowBlock) {
      if (closed) throw new ShoalError('invalid-parameter', `${path}: the writer is closed`);
      plan.check(block, path);
      for (let r = 0; r < block.rows; r++) {
        pendingValues.set(block.values.subarray(r * width, (r + 1) * width), pending * width);
        pendingLabels[pending] = block.labels === null ? Number.NaN : block.labels[r]!;
        if (plan.id !== null) pendingIds.push(block.ids![r]!);
        pending++;
        rowsWritten++;
        if (pending === batchRows) await flush();
      }
    },
    async close() {
      if (closed) return;
      closed = true;
      await flush();
      writer.finish();
      await drain();
      await handle.close();
    },
  };
}
