import { type Data, DataType, makeVector, Precision, type Schema, type Vector } from 'apache-arrow';
import { type ChangePoints, readChangePoints } from '../core/index.js';
import { type ColumnType, numericProblem, showCell } from './cells.js';
import type { Binding, SourceColumn } from './columns.js';
import type { DeclaredSchema, FrameDecoder } from './decoder.js';
import { describePosition, type Rejection } from './frame.js';

/**
 * Arrow record batches → rows of a frame. Each column is read once per batch, straight into the
 * row-major buffer: a numeric column of one chunk is its typed array (Arrow JS hands out `subarray`
 * views), copied with a stride; the validity bitmap is consulted only when `nullCount > 0`; a dictionary
 * column looks each dictionary entry up once per batch, on first use, so that codes still follow the
 * order of first appearance. Layouts: Apache Arrow Columnar Format, "Fixed-size primitive layout",
 * "Validity bitmaps" (LSB bit order) and "Dictionary-encoded layout".
 */

/** Schema metadata keys under which Shoal's Arrow writer records the features and classes. */
export const FEATURES_KEY = 'shoal.features';
export const CLASSES_KEY = 'shoal.classes';
/** The schema metadata key under which `shoal spawn` records a stream's true change points. */
export const CHANGES_KEY = 'shoal.changes';

/**
 * The true change points an Arrow schema's metadata records (`CHANGES_KEY`, JSON of `ChangePoints`):
 * null when it records none, a message when the entry is not what the writer writes.
 */
export function declaredChanges(metadata: ReadonlyMap<string, string>): ChangePoints | string | null {
  const text = metadata.get(CHANGES_KEY);
  if (text === undefined) return null;
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (e) {
    return `schema metadata ${CHANGES_KEY} is not valid JSON: ${(e as Error).message}`;
  }
  const read = readChangePoints(value);
  return typeof read === 'string' ? `schema metadata ${CHANGES_KEY}: ${read}` : read;
}

function columnType(type: DataType): ColumnType {
  if (DataType.isDictionary(type)) return columnType(type.dictionary);
  if (DataType.isInt(type) || DataType.isFloat(type)) return 'number';
  if (DataType.isBool(type)) return 'bool';
  if (DataType.isUtf8(type) || DataType.isLargeUtf8(type) || DataType.isUtf8View(type)) return 'string';
  if (DataType.isNull(type)) return 'empty';
  return 'other';
}

/** The columns of an Arrow schema as the decoder binds them. */
export function arrowColumns(schema: Schema): SourceColumn[] {
  return schema.fields.map((f) => ({ name: f.name, type: columnType(f.type), detail: String(f.type) }));
}

/** The features and classes an Arrow schema declares in its metadata, if any. */
export function declaredSchema(schema: Schema): DeclaredSchema | string | null {
  const features = schema.metadata.get(FEATURES_KEY);
  const classes = schema.metadata.get(CLASSES_KEY);
  if (features === undefined && classes === undefined) return null;
  try {
    return {
      ...(features === undefined ? {} : { features: JSON.parse(features) as unknown }),
      ...(classes === undefined ? {} : { classes: JSON.parse(classes) as unknown }),
    };
  } catch (e) {
    return `schema metadata ${FEATURES_KEY}/${CLASSES_KEY} is not valid JSON: ${(e as Error).message}`;
  }
}

/** A fixed-width column whose values can be copied as numbers. */
function isPlainNumeric(type: DataType): boolean {
  return (
    (DataType.isFloat(type) && type.precision !== Precision.HALF) ||
    (DataType.isInt(type) && type.bitWidth < 64)
  );
}

function isInt64(type: DataType): boolean {
  return DataType.isInt(type) && type.bitWidth === 64;
}

function isValid(bitmap: Uint8Array, bit: number): boolean {
  return (bitmap[bit >> 3]! & (1 << (bit & 7))) !== 0;
}

/** Arrow JS's own decoder of Utf8 values: UTF-8, invalid sequences replaced, a leading BOM dropped. */
const UTF8 = new TextDecoder();
/** Values up to this many bytes are read char by char when they are ASCII (most ids and labels). */
const SHORT_UTF8 = 24;

/**
 * The string at row r of a Utf8 column, or null where it is missing: what Arrow's `get` returns, read
 * straight from the offsets and bytes (Apache Arrow Columnar Format, "Variable-size binary layout") —
 * a short ASCII value char by char, any other through the same kind of `TextDecoder` as Arrow's —
 * without the view and decoder call Arrow makes for every value.
 */
function utf8Cell(data: Data, r: number): string | null {
  if (data.nullCount > 0 && !isValid(data.nullBitmap, data.offset + r)) return null;
  const offsets = data.valueOffsets as Int32Array;
  if (r + 1 >= offsets.length) return null;
  const bytes = data.values as Uint8Array;
  const start = offsets[r]!;
  const end = offsets[r + 1]!;
  if (end - start > SHORT_UTF8) return UTF8.decode(bytes.subarray(start, end));
  let text = '';
  for (let k = start; k < end; k++) {
    const c = bytes[k]!;
    if (c >= 0x80) return UTF8.decode(bytes.subarray(start, end));
    text += String.fromCharCode(c);
  }
  return text;
}

/** out[start + r × width] = src[r] for r < n: one column into the row-major buffer. */
function copyColumn(
  out: Float64Array,
  width: number,
  start: number,
  src: ArrayLike<number>,
  n: number,
): void {
  for (let r = 0, o = start; r < n; r++, o += width) out[o] = src[r]!;
}

/**
 * `copyColumn` for floats, telling on the way whether every value is finite: false when one is ±∞ or
 * NaN (x · 0 is NaN then), so that only a column holding NaN or ±∞ is looked at row by row.
 */
function copyFloats(
  out: Float64Array,
  width: number,
  start: number,
  src: Float32Array | Float64Array,
  n: number,
): boolean {
  let a = 0;
  let b = 0;
  let r = 0;
  for (let o = start; r + 1 < n; r += 2, o += 2 * width) {
    const x = src[r]!;
    const y = src[r + 1]!;
    out[o] = x;
    out[o + width] = y;
    a += x * 0;
    b += y * 0;
  }
  if (r < n) {
    const x = src[r]!;
    out[start + r * width] = x;
    a += x * 0;
  }
  return a + b === 0;
}

/** Overwrite with NaN the rows whose validity bit is 0 (only called when the column has nulls). */
function clearNulls(out: Float64Array, width: number, start: number, data: Data, n: number): void {
  const bitmap = data.nullBitmap;
  for (let r = 0, o = start; r < n; r++, o += width) {
    if (!isValid(bitmap, data.offset + r)) out[o] = Number.NaN;
  }
}

/**
 * 64-bit integers read as two 32-bit words (low word first, little-endian), hi × 2³² + lo: the same
 * correctly rounded double as `Number(bigint)` without making a BigInt per value.
 */
function copyInt64(out: Float64Array, width: number, start: number, data: Data, n: number): void {
  const values = data.values as BigInt64Array | BigUint64Array;
  const words = new Int32Array(values.buffer, values.byteOffset, n * 2);
  const signed = DataType.isInt(data.type) && data.type.isSigned;
  for (let r = 0, o = start; r < n; r++, o += width) {
    const hi = words[2 * r + 1]!;
    out[o] = (signed ? hi : hi >>> 0) * 4294967296 + (words[2 * r]! >>> 0);
  }
}

/** Booleans are bits (LSB first) starting at bit `offset` of the values buffer. */
function copyBool(out: Float64Array, width: number, start: number, data: Data, n: number): void {
  const bits = data.values as Uint8Array;
  for (let r = 0, o = start; r < n; r++, o += width) out[o] = isValid(bits, data.offset + r) ? 1 : 0;
}

/** Codes of one dictionary's entries, looked up on first use: NaN missing, −1 refused, −2 not yet seen. */
interface DictionaryCodes {
  dictionary: Vector | null;
  codes: Float64Array;
}

const UNSEEN = -2;

/** Fills frame rows from record batches for one decoder, keeping per-column dictionary lookups. */
export class ArrowBatchFiller {
  private readonly decoder: FrameDecoder;
  /** One entry per feature, plus one for the label at index `width`. */
  private readonly lookups: DictionaryCodes[] = [];
  private source = '';
  private batchIndex = -1;
  private rejected: Rejection[] = [];
  private refusedCount = 0;

  constructor(decoder: FrameDecoder) {
    this.decoder = decoder;
  }

  /**
   * Decode a record batch (its column data, in schema order, and its row count) into rows at … at + n − 1
   * of the decoder's buffer (which must have room). Rows with a problem are marked refused in the buffer
   * and reported in `rejected`; returns how many. A row's position is its index `at + r` in the frame
   * being built (its row in the record batch, or in the message).
   */
  fill(
    columns: readonly Data[],
    n: number,
    binding: Binding,
    at: number,
    ids: string[] | null,
    where: { readonly source: string; readonly batch: number; readonly rejected: Rejection[] },
  ): number {
    this.source = where.source;
    this.batchIndex = where.batch;
    this.rejected = where.rejected;
    this.refusedCount = 0;
    const decoder = this.decoder;
    const buffer = decoder.buffer;
    const width = decoder.schema!.features.length;
    const positions = buffer.positions;
    for (let r = at; r < at + n; r++) positions[r] = r;
    for (let j = 0; j < width; j++) {
      const data = columns[binding.features[j]!]!;
      if (decoder.vocabulary(j) === null) this.fillNumeric(data, j, width, at, n);
      else this.fillNominal(data, j, width, at, n);
    }
    if (binding.label >= 0) this.fillLabels(columns[binding.label]!, width, at, n);
    if (ids !== null) this.fillIds(columns[binding.id]!, at, n, ids);
    return this.refusedCount;
  }

  private refuse(row: number, what: string): void {
    const refused = this.decoder.buffer.refused;
    if (refused[row] === 1) return;
    refused[row] = 1;
    this.refusedCount++;
    const position = this.decoder.buffer.positions[row]!;
    this.rejected.push({
      index: position,
      reason: `${describePosition(this.source, 'row', this.batchIndex, position)}: ${what}`,
    });
  }

  private fillNumeric(data: Data, j: number, width: number, at: number, n: number): void {
    const out = this.decoder.buffer.values;
    const start = at * width + j;
    const type = data.type;
    let finite = true;
    if (DataType.isFloat(type) && isPlainNumeric(type))
      finite = copyFloats(out, width, start, data.values as Float32Array | Float64Array, n);
    else if (isPlainNumeric(type)) copyColumn(out, width, start, data.values as ArrayLike<number>, n);
    else if (isInt64(type)) copyInt64(out, width, start, data, n);
    else if (DataType.isBool(type)) copyBool(out, width, start, data, n);
    else {
      const vector = makeVector(data);
      for (let r = 0, o = start; r < n; r++, o += width) {
        const value = vector.get(r);
        const x = this.decoder.cells.numeric(value);
        const problem = numericProblem(x, value);
        if (problem !== null) this.refuse(at + r, `${this.decoder.column(j)}: ${problem}`);
        else out[o] = x!;
      }
      return;
    }
    if (data.nullCount > 0) clearNulls(out, width, start, data, n);
    if (!finite) this.refuseInfinite(j, width, at, n);
  }

  /** Refuse the rows of column `j` (copied into rows at … at + n − 1) whose value is infinite. */
  private refuseInfinite(j: number, width: number, at: number, n: number): void {
    const out = this.decoder.buffer.values;
    for (let r = 0, o = at * width + j; r < n; r++, o += width) {
      const x = out[o]!;
      // x − x is NaN only for ±∞ and NaN (missing, which is fine).
      if (Number.isNaN(x - x) && !Number.isNaN(x))
        this.refuse(at + r, `${this.decoder.column(j)}: ${numericProblem(x, x)}`);
    }
  }

  private fillNominal(data: Data, j: number, width: number, at: number, n: number): void {
    const out = this.decoder.buffer.values;
    const vocabulary = this.decoder.vocabulary(j)!;
    const start = at * width + j;
    const cells = this.decoder.cells;
    const lookup = (value: unknown): number => {
      const name = cells.category(value);
      return name === undefined ? -1 : name === null ? Number.NaN : vocabulary.code(name);
    };
    const refuse = (row: number, value: unknown) => {
      const name = cells.category(value);
      this.refuse(
        row,
        name === undefined || name === null
          ? `${this.decoder.column(j)}: expected a category, got ${showCell(value)}`
          : this.decoder.unknownCategory(j, name),
      );
    };
    this.fillCoded(data, j, start, width, at, n, out, lookup, refuse);
  }

  private fillLabels(data: Data, width: number, at: number, n: number): void {
    const labels = this.decoder.labelDictionary();
    const out = this.decoder.buffer.labels;
    if (labels.mode === 'value') {
      // A regression target is its own value: no dictionary to look up, each cell read as a number.
      const plain = isPlainNumeric(data.type);
      const values = data.values as ArrayLike<number>;
      const vector = plain ? null : makeVector(data);
      for (let r = 0; r < n; r++) {
        const valid = data.nullCount === 0 || isValid(data.nullBitmap, data.offset + r);
        const value: unknown = !valid ? null : plain ? values[r]! : vector!.get(r);
        const target = labels.read(value);
        if (target === undefined) this.refuse(at + r, labels.explain(value));
        else out[at + r] = target;
      }
      return;
    }
    if (labels.mode === 'code' && isPlainNumeric(data.type)) {
      const values = data.values as ArrayLike<number>;
      const nulls = data.nullCount > 0;
      for (let r = 0; r < n; r++) {
        const value = values[r]!;
        if (Number.isNaN(value) || (nulls && !isValid(data.nullBitmap, data.offset + r))) {
          out[at + r] = Number.NaN;
          continue;
        }
        const code = labels.codeOfNumber(value);
        if (code < 0) this.refuse(at + r, labels.explain(value));
        else out[at + r] = code;
      }
      return;
    }
    this.fillCoded(
      data,
      width,
      at,
      1,
      at,
      n,
      out,
      (value) => labels.code(value),
      (row, value) => this.refuse(row, labels.explain(value)),
    );
  }

  /**
   * Codes for a column through `lookup` (a vocabulary or the label dictionary), written at
   * out[start + r × stride]. A dictionary column looks up each entry once; any other column looks up
   * every value.
   */
  private fillCoded(
    data: Data,
    slot: number,
    start: number,
    stride: number,
    at: number,
    n: number,
    out: Float64Array,
    lookup: (value: unknown) => number,
    refuse: (row: number, value: unknown) => void,
  ): void {
    const type = data.type;
    if (DataType.isDictionary(type) && type.indices.bitWidth < 64 && data.dictionary !== undefined) {
      const dictionary = data.dictionary;
      const entry = this.lookupFor(slot, dictionary);
      const keys = data.values as ArrayLike<number>;
      const nulls = data.nullCount > 0;
      for (let r = 0, o = start; r < n; r++, o += stride) {
        if (nulls && !isValid(data.nullBitmap, data.offset + r)) {
          out[o] = Number.NaN;
          continue;
        }
        const key = keys[r]!;
        let code = entry.codes[key]!;
        if (code === UNSEEN) code = entry.codes[key] = lookup(dictionary.get(key));
        if (code === -1) refuse(at + r, dictionary.get(key));
        else out[o] = code;
      }
      return;
    }
    const utf8 = DataType.isUtf8(type);
    const vector = utf8 ? null : makeVector(data);
    for (let r = 0, o = start; r < n; r++, o += stride) {
      const value: unknown = utf8 ? utf8Cell(data, r) : vector!.get(r);
      const code = lookup(value);
      if (code === -1) refuse(at + r, value);
      else out[o] = code;
    }
  }

  private lookupFor(slot: number, dictionary: Vector): DictionaryCodes {
    let entry = this.lookups[slot];
    if (entry === undefined) {
      entry = { dictionary: null, codes: new Float64Array(0) };
      this.lookups[slot] = entry;
    }
    if (entry.dictionary !== dictionary) {
      entry.dictionary = dictionary;
      entry.codes = new Float64Array(dictionary.length).fill(UNSEEN);
    }
    return entry;
  }

  private fillIds(data: Data, at: number, n: number, ids: string[]): void {
    const utf8 = DataType.isUtf8(data.type);
    const vector = utf8 ? null : makeVector(data);
    for (let r = 0; r < n; r++) {
      const value: unknown = utf8 ? utf8Cell(data, r) : vector!.get(r);
      if (value === null || value === undefined || value === '') {
        this.refuse(at + r, `no id in column ${JSON.stringify(this.decoder.options.id)}`);
      } else ids[at + r] = String(value);
    }
  }
}
