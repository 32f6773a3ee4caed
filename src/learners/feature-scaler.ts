import { encodeF64, type FeatureSchema, WELFORD_SLOTS, welfordAdd, welfordVariance } from '../core/index.js';
import { isPresent } from './missing.js';
import { decodeF64Exact } from './typed-arrays.js';

/**
 * Online standardisation of the numeric features of a schema: a weighted running mean and variance per
 * feature (West 1979, the weighted Welford update in `src/core`), so that a learner can read a value as
 * z = (x − mean) / sd without a pass over past data. Until a feature shows spread, its sd is taken as 1.
 * Missing values (see `missing.ts`) are skipped. The scale moves as data arrives; learners that keep
 * weights over standardised inputs accept that drift, as every online standardisation does.
 *
 * @example
 * const scaler = new FeatureScaler(schema);
 * scaler.observe(row, 0, 1);
 * const z = (row[scaler.columns[0]] - scaler.mean(0)) * scaler.invSd[0];
 */
export class FeatureScaler {
  /** Index in the row of each numeric feature, in schema order. */
  readonly columns: Int32Array;
  /** Per numeric feature: [total weight, mean, sum of weighted squared deviations]. */
  readonly stats: Float64Array;
  /** Per numeric feature: 1 / population standard deviation, or 1 while the variance is 0. */
  readonly invSd: Float64Array;

  constructor(schema: FeatureSchema) {
    const columns: number[] = [];
    schema.features.forEach((f, i) => {
      if (f.kind === 'numeric') columns.push(i);
    });
    this.columns = Int32Array.from(columns);
    this.stats = new Float64Array(columns.length * WELFORD_SLOTS);
    this.invSd = new Float64Array(columns.length).fill(1);
  }

  /** Running mean of the j-th numeric feature (0 before any value). */
  mean(j: number): number {
    return this.stats[j * WELFORD_SLOTS + 1]!;
  }

  /** Add the numeric values of one row with weight `weight` (> 0). */
  observe(row: Float64Array, offset: number, weight: number): void {
    const { columns, stats, invSd } = this;
    for (let j = 0; j < columns.length; j++) {
      const x = row[offset + columns[j]!]!;
      if (!isPresent(x)) continue;
      welfordAdd(stats, j * WELFORD_SLOTS, x, weight);
      invSd[j] = inverseSd(stats, j);
    }
  }

  /** The statistics, JSON-safe. */
  state(): string {
    return encodeF64(this.stats);
  }

  /** Load statistics taken with `state()` from a scaler built on the same schema. */
  load(text: unknown): void {
    this.stats.set(decodeF64Exact(text, this.stats.length, 'feature scaler statistics'));
    for (let j = 0; j < this.invSd.length; j++) this.invSd[j] = inverseSd(this.stats, j);
  }

  sizeBytes(): number {
    return this.columns.byteLength + this.stats.byteLength + this.invSd.byteLength;
  }
}

function inverseSd(stats: Float64Array, j: number): number {
  const v = welfordVariance(stats, j * WELFORD_SLOTS);
  return v > 0 ? 1 / Math.sqrt(v) : 1;
}
