import { encodeF64 } from '../core/index.js';
import type { SparseInput } from './sparse-input.js';
import { decodeF64Exact, growF64 } from './typed-arrays.js';

/** Below this a row's scale is folded back into its weights, before it can underflow. */
const FOLD_BELOW = 1e-9;

/**
 * One weight vector per class over the inputs of a `SparseInput`, kept as w_c = s_c · v_c so that an L2
 * shrink of every weight, w ← (1 − ηλ) w, costs one multiplication per class instead of one per weight.
 * This is the representation w = a·v suggested for sparse data by Shalev-Shwartz, Singer & Srebro
 * ("Pegasos", ICML 2007) and by Bottou ("Stochastic gradient descent tricks", Neural Networks: Tricks of
 * the Trade, 2012), both from memory: updates touch only the active inputs of a sparse row. The squared norm of each v_c is kept up to
 * date incrementally so that Pegasos' projection needs no pass over the weights.
 *
 * @example
 * const map = new LinearMap(input.dimension);
 * map.grow(2);
 * map.decay(1 - eta * lambda);
 * map.add(1, input, eta);          // w_1 += eta · x
 * const margin = map.dot(1, input); // w_1 · x
 */
export class LinearMap {
  readonly dimension: number;
  /** Number of weight vectors (classes). */
  rows = 0;
  /** Unscaled weights v, row-major: rows × dimension. */
  weights: Float64Array = new Float64Array(0);
  /** Scale s_c of each row. */
  scale: Float64Array = new Float64Array(0);
  /** ‖v_c‖² of each row (unscaled). */
  squares: Float64Array = new Float64Array(0);

  constructor(dimension: number) {
    this.dimension = dimension;
  }

  /** Add rows up to `rows`; a new row is the zero vector. */
  grow(rows: number): void {
    this.weights = growF64(this.weights, rows * this.dimension);
    this.scale = growF64(this.scale, rows, 1);
    this.squares = growF64(this.squares, rows);
    this.rows = rows;
  }

  /** w_c · x for the row last encoded in `input`. */
  dot(c: number, input: SparseInput): number {
    const { index, value, size } = input;
    const w = this.weights;
    const base = c * this.dimension;
    let s = 0;
    for (let k = 0; k < size; k++) s += w[base + index[k]!]! * value[k]!;
    return s * this.scale[c]!;
  }

  /** Set every row's weights on inputs [start, end) to zero. */
  zeroInputs(start: number, end: number): void {
    const w = this.weights;
    for (let c = 0; c < this.rows; c++) {
      const base = c * this.dimension;
      let removed = 0;
      for (let i = base + start; i < base + end; i++) {
        removed += w[i]! * w[i]!;
        w[i] = 0;
      }
      this.squares[c] = Math.max(0, this.squares[c]! - removed);
    }
  }

  /** Multiply every row by `factor` ∈ [0, 1]; a factor of 0 resets the rows to zero. */
  decay(factor: number): void {
    for (let c = 0; c < this.rows; c++) this.rescale(c, factor);
  }

  /** Multiply row c by `factor` ≥ 0. */
  rescale(c: number, factor: number): void {
    if (factor <= 0) {
      this.weights.fill(0, c * this.dimension, (c + 1) * this.dimension);
      this.scale[c] = 1;
      this.squares[c] = 0;
      return;
    }
    const s = this.scale[c]! * factor;
    this.scale[c] = s;
    if (s < FOLD_BELOW) this.fold(c);
  }

  /** w_c ← w_c + step · x for the row last encoded in `input`. */
  add(c: number, input: SparseInput, step: number): void {
    const { index, value, size } = input;
    const w = this.weights;
    const base = c * this.dimension;
    const inc = step / this.scale[c]!;
    let dot = 0;
    let xx = 0;
    for (let k = 0; k < size; k++) {
      const i = base + index[k]!;
      const x = value[k]!;
      dot += w[i]! * x;
      xx += x * x;
      w[i]! += inc * x;
    }
    this.squares[c]! += 2 * inc * dot + inc * inc * xx;
  }

  /** ‖w_c‖². */
  normSquared(c: number): number {
    const s = this.scale[c]!;
    return s * s * Math.max(0, this.squares[c]!);
  }

  /** The weights, JSON-safe. */
  state(): { weights: string; scale: string; squares: string } {
    return {
      weights: encodeF64(this.weights),
      scale: encodeF64(this.scale),
      squares: encodeF64(this.squares),
    };
  }

  /** Load weights taken with `state()`; `rows` must already be grown to the saved count. */
  load(state: { weights?: unknown; scale?: unknown; squares?: unknown }): void {
    this.weights = decodeF64Exact(state.weights, this.rows * this.dimension, 'linear weights');
    this.scale = decodeF64Exact(state.scale, this.rows, 'linear weight scales');
    this.squares = decodeF64Exact(state.squares, this.rows, 'linear weight norms');
  }

  sizeBytes(): number {
    return this.weights.byteLength + this.scale.byteLength + this.squares.byteLength;
  }

  /** Fold s_c into v_c and recompute ‖v_c‖² exactly. */
  private fold(c: number): void {
    const w = this.weights;
    const s = this.scale[c]!;
    let sq = 0;
    for (let i = c * this.dimension; i < (c + 1) * this.dimension; i++) {
      const v = w[i]! * s;
      w[i] = v;
      sq += v * v;
    }
    this.scale[c] = 1;
    this.squares[c] = sq;
  }
}
