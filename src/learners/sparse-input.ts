import { type FeatureSchema, WELFORD_SLOTS } from '../core/index.js';
import { FeatureScaler } from './feature-scaler.js';
import { isPresent, nominalCode } from './missing.js';

/**
 * A row as the linear learners and the network read it: a sparse vector over `dimension` inputs, written
 * into buffers the encoder owns (no allocation per row).
 *
 * Layout of the inputs, decided once from the schema:
 * - one input per numeric feature, its value standardised online (`FeatureScaler`); a missing value is
 *   left out, which is imputing the running mean (z = 0);
 * - one input per category of each nominal feature (one-hot); a missing code sets none of them;
 * - a last input that is always 1, so a bias is an ordinary weight.
 *
 * At most one entry per feature plus the constant is active, so a row costs O(features), however many
 * categories the nominal features have.
 *
 * @example
 * const input = new SparseInput(schema);
 * input.encode(row, 0);
 * for (let k = 0; k < input.size; k++) dot += w[input.index[k]] * input.value[k];
 */
export class SparseInput {
  readonly scaler: FeatureScaler;
  /** Number of inputs, the constant one included. */
  readonly dimension: number;
  /** Input index of each active entry of the last encoded row. */
  readonly index: Int32Array;
  /** Value of each active entry of the last encoded row. */
  readonly value: Float64Array;
  /** Number of active entries of the last encoded row. */
  size = 0;
  private readonly nominalColumns: Int32Array;
  private readonly nominalValues: Int32Array;
  private readonly nominalBase: Int32Array;

  constructor(schema: FeatureSchema) {
    this.scaler = new FeatureScaler(schema);
    const columns: number[] = [];
    const values: number[] = [];
    const base: number[] = [];
    let next = this.scaler.columns.length;
    schema.features.forEach((f, i) => {
      if (f.kind === 'nominal') {
        columns.push(i);
        values.push(f.values);
        base.push(next);
        next += f.values;
      }
    });
    this.nominalColumns = Int32Array.from(columns);
    this.nominalValues = Int32Array.from(values);
    this.nominalBase = Int32Array.from(base);
    this.dimension = next + 1;
    this.index = new Int32Array(schema.features.length + 1);
    this.value = new Float64Array(schema.features.length + 1);
  }

  /**
   * The inputs feature `feature` of the schema feeds, as [start, end): one for a numeric feature, one
   * per category for a nominal one.
   */
  inputsOf(feature: number): [number, number] {
    const numericAt = this.scaler.columns.indexOf(feature);
    if (numericAt >= 0) return [numericAt, numericAt + 1];
    const nominalAt = this.nominalColumns.indexOf(feature);
    const start = this.nominalBase[nominalAt]!;
    return [start, start + this.nominalValues[nominalAt]!];
  }

  /** Encode the row at `offset` with the scaler's current statistics. */
  encode(row: Float64Array, offset: number): void {
    const { index, value } = this;
    const { columns, stats, invSd } = this.scaler;
    let size = 0;
    for (let j = 0; j < columns.length; j++) {
      const x = row[offset + columns[j]!]!;
      if (!isPresent(x)) continue;
      index[size] = j;
      value[size] = (x - stats[j * WELFORD_SLOTS + 1]!) * invSd[j]!;
      size++;
    }
    const { nominalColumns, nominalValues, nominalBase } = this;
    for (let j = 0; j < nominalColumns.length; j++) {
      const code = nominalCode(row[offset + nominalColumns[j]!]!, nominalValues[j]!);
      if (code < 0) continue;
      index[size] = nominalBase[j]! + code;
      value[size] = 1;
      size++;
    }
    index[size] = this.dimension - 1;
    value[size] = 1;
    this.size = size + 1;
  }

  sizeBytes(): number {
    return (
      this.scaler.sizeBytes() +
      this.index.byteLength +
      this.value.byteLength +
      3 * this.nominalColumns.byteLength
    );
  }
}
