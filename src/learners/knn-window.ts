import {
  argmax,
  checkSnapshot,
  defaultsOf,
  encodeF64,
  encodeI32,
  type FeatureSchema,
  normalizeInPlace,
  type OptionsOf,
  type OptionTable,
  resolveOptions,
  type Seed,
  ShoalError,
} from '../core/index.js';
import { FeatureScaler } from './feature-scaler.js';
import type { LearnerSnapshot } from './learner.js';
import { isPresent, nominalCode } from './missing.js';
import { OnlineClassifier } from './online-classifier.js';
import { decodeF64Exact, decodeI32Exact, snapshotNumber } from './typed-arrays.js';

/** The kNN window's options (see `OptionTable`); k = 10 over the last 1,000 rows, plain vote: common practice. */
export const KNN_WINDOW_OPTIONS = {
  k: { type: 'integer', atLeast: 1, default: 10, doc: 'number of neighbours that vote' },
  window: {
    type: 'integer',
    atLeast: 1,
    default: 1000,
    doc: 'most recent training rows kept; forgetting older rows is how kNN follows drift',
  },
  // `plain`: each neighbour votes with its training weight (Cover & Hart, "Nearest neighbor pattern
  // classification", IEEE Trans. Information Theory 13, 1967). `distance`: the vote is divided by the
  // distance (plus 1e-9), so closer neighbours count more (in the spirit of Dudani, "The distance-weighted
  // k-nearest-neighbor rule", IEEE Trans. SMC 6, 1976, whose weights are linear; 1/d is common practice).
  vote: {
    type: 'choice',
    choices: ['plain', 'distance'],
    default: 'plain',
    doc: 'plain: weight votes; distance: weight / distance votes',
  },
} as const satisfies OptionTable;

export type KnnWindowOptions = OptionsOf<typeof KNN_WINDOW_OPTIONS>;

export type KnnVote = KnnWindowOptions['vote'];

export const KNN_WINDOW_DEFAULTS: KnnWindowOptions = defaultsOf(KNN_WINDOW_OPTIONS);

const KIND = 'knn-window';
const VERSION = 1;
/** Added to a distance before dividing by it, so an exact match gets a large but finite vote. */
const DISTANCE_EPSILON = 1e-9;
/** Expected (z_a − z_b)² of two independent standardised values: the cost of a missing numeric value. */
const MISSING_NUMERIC = 2;
/** The largest per-feature cost of a nominal feature: the cost of a missing code. */
const MISSING_NOMINAL = 1;

function resolve(options: Partial<KnnWindowOptions>): KnnWindowOptions {
  return resolveOptions(KIND, KNN_WINDOW_OPTIONS, options);
}

/**
 * k nearest neighbours over a sliding window of the most recent training rows.
 *
 * Rows are kept raw in a ring buffer (one `Float64Array`, row-major), their labels and training weights
 * beside them; a row with weight 0 is not stored. Distance between a query a and a stored row b is the
 * heterogeneous sum of Wilson & Martinez ("Improved heterogeneous distance functions", JAIR 6, 1997, the
 * HEOM form), with standardisation in place of range normalisation:
 *   numeric j:  ((a_j − b_j) / sd_j)², sd_j the running standard deviation over all training rows so far;
 *   nominal j:  0 if the codes are equal, 1 otherwise (the overlap metric);
 *   missing:    a numeric value missing on either side costs 2, the expected squared difference of two
 *               independent standardised values; a missing code costs 1, the overlap maximum (HEOM charges
 *               the maximum for a missing value).
 * Neighbours are ranked by this squared distance; ties go to the more recent row. The search is exhaustive
 * over the window; once k rows are held, a row is abandoned during its nominal features as soon as its
 * partial sum can no longer enter the k best (the numeric part runs without a test: it is cheaper whole).
 *
 * Probabilities are the normalised votes of the k neighbours (see `vote`); with an empty window they are
 * uniform. No randomness: the seed is accepted for a uniform constructor and unused.
 *
 * @example
 * const knn = new KnnWindow(schema, { k: 5, window: 500 });
 * knn.ensureClasses(2);
 * const predicted = knn.scoreTrain(frame, i * width, label, 1, out, 0);
 */
export class KnnWindow extends OnlineClassifier {
  readonly options: KnnWindowOptions;
  private readonly scaler: FeatureScaler;
  private readonly nominalColumns: Int32Array;
  private readonly nominalValues: Int32Array;
  /**
   * Stored rows, `window` slots of `stride` values: the numeric features in scaler order (non-finite stored
   * as NaN), then the nominal codes (−1 for missing).
   */
  private readonly stored: Float64Array;
  private readonly stride: number;
  private readonly labels: Int32Array;
  private readonly weights: Float64Array;
  /** Next slot to write. */
  private head = 0;
  /** Slots in use. */
  private count = 0;
  /** The query in stored layout. */
  private readonly query: Float64Array;
  private readonly bestDistance: Float64Array;
  private readonly bestSlot: Int32Array;

  constructor(schema: FeatureSchema, options: Partial<KnnWindowOptions> = {}, _seed: Seed = 0) {
    super(KIND, schema);
    this.options = resolve(options);
    this.scaler = new FeatureScaler(schema);
    const columns: number[] = [];
    const values: number[] = [];
    schema.features.forEach((f, i) => {
      if (f.kind === 'nominal') {
        columns.push(i);
        values.push(f.values);
      }
    });
    this.nominalColumns = Int32Array.from(columns);
    this.nominalValues = Int32Array.from(values);
    this.stride = this.width;
    const { window, k } = this.options;
    this.stored = new Float64Array(window * this.stride);
    this.labels = new Int32Array(window);
    this.weights = new Float64Array(window);
    this.query = new Float64Array(this.stride);
    this.bestDistance = new Float64Array(k);
    this.bestSlot = new Int32Array(k);

    this.ensureClasses(1);
  }

  static restore(snapshot: LearnerSnapshot): KnnWindow {
    checkSnapshot(snapshot, KIND, VERSION);
    const state = (snapshot.state ?? {}) as Record<string, unknown>;
    const knn = new KnnWindow(snapshot.schema, snapshot.options as Partial<KnnWindowOptions>);
    const window = knn.options.window;
    knn.ensureClasses(snapshotNumber(state.classes, 'knn-window classes'));
    knn.scaler.load(state.scaler);
    knn.stored.set(decodeF64Exact(state.stored, window * knn.stride, 'window rows'));
    knn.labels.set(decodeI32Exact(state.labels, window, 'window labels'));
    knn.weights.set(decodeF64Exact(state.weights, window, 'window weights'));
    const head = snapshotNumber(state.head, 'window head');
    const count = snapshotNumber(state.count, 'window count');
    if (!(Number.isInteger(head) && Number.isInteger(count) && head < window && count <= window)) {
      throw new ShoalError(
        'invalid-snapshot',
        `knn-window: head ${head} and count ${count} do not fit a window of ${window}`,
      );
    }
    for (let slot = 0; slot < count; slot++) {
      const label = knn.labels[slot]!;
      if (!(label >= 0 && label < knn.classes)) {
        throw new ShoalError(
          'invalid-snapshot',
          `knn-window: stored label ${label} is not one of the snapshot's ${knn.classes} classes`,
        );
      }
    }
    knn.head = head;
    knn.count = count;
    return knn;
  }

  snapshot(): LearnerSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      schema: this.schema,
      options: { ...this.options },
      state: {
        classes: this.classes,
        scaler: this.scaler.state(),
        stored: encodeF64(this.stored),
        labels: encodeI32(this.labels),
        weights: encodeF64(this.weights),
        head: this.head,
        count: this.count,
      },
    };
  }

  sizeBytes(): number {
    return (
      this.scaler.sizeBytes() +
      this.stored.byteLength +
      this.labels.byteLength +
      this.weights.byteLength +
      this.query.byteLength +
      this.bestDistance.byteLength +
      this.bestSlot.byteLength +
      this.nominalColumns.byteLength +
      this.nominalValues.byteLength
    );
  }

  protected predict(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    const classes = this.classes;
    out.fill(0, outOffset, outOffset + classes);
    this.toStoredLayout(row, offset, this.query, 0);
    const found = this.search();
    const { bestDistance, bestSlot, labels, weights } = this;
    const byDistance = this.options.vote === 'distance';
    for (let i = 0; i < found; i++) {
      const slot = bestSlot[i]!;
      const vote = byDistance
        ? weights[slot]! / (Math.sqrt(bestDistance[i]!) + DISTANCE_EPSILON)
        : weights[slot]!;
      out[outOffset + labels[slot]!]! += vote;
    }
    normalizeInPlace(out, outOffset, classes);
    return argmax(out, outOffset, classes);
  }

  protected learn(row: Float64Array, offset: number, label: number, weight: number): void {
    const slot = this.head;
    this.toStoredLayout(row, offset, this.stored, slot * this.stride);
    this.labels[slot] = label;
    this.weights[slot] = weight;
    this.head = slot + 1 === this.options.window ? 0 : slot + 1;
    if (this.count < this.options.window) this.count++;
    this.scaler.observe(row, offset, weight);
  }

  protected growClasses(): void {
    // Labels are stored as codes and votes are written straight into the caller's buffer: nothing to grow.
  }

  /** Copy a row into the stored layout at `to[at …]`: numeric values, then nominal codes. */
  private toStoredLayout(row: Float64Array, offset: number, to: Float64Array, at: number): void {
    const columns = this.scaler.columns;
    const numeric = columns.length;
    for (let j = 0; j < numeric; j++) {
      const x = row[offset + columns[j]!]!;
      to[at + j] = isPresent(x) ? x : Number.NaN;
    }
    const { nominalColumns, nominalValues } = this;
    for (let j = 0; j < nominalColumns.length; j++) {
      to[at + numeric + j] = nominalCode(row[offset + nominalColumns[j]!]!, nominalValues[j]!);
    }
  }

  /**
   * Fill `bestDistance`/`bestSlot` with the k nearest stored rows to `query`, nearest first, visiting rows
   * from the newest so that ties keep the more recent one. Returns how many were found (≤ k).
   */
  private search(): number {
    const { stored, stride, query, bestDistance, bestSlot, count } = this;
    const { k, window } = this.options;
    const invSd = this.scaler.invSd;
    const numeric = invSd.length;
    let found = 0;
    let limit = Number.POSITIVE_INFINITY;
    let slot = this.head;
    for (let n = 0; n < count; n++) {
      slot = slot === 0 ? window - 1 : slot - 1;
      const base = slot * stride;
      let d = 0;
      for (let j = 0; j < numeric; j++) {
        const diff = (query[j]! - stored[base + j]!) * invSd[j]!;
        d += Number.isNaN(diff) ? MISSING_NUMERIC : diff * diff;
      }
      for (let j = numeric; j < stride && d < limit; j++) {
        // Equal valid codes cost 0; a mismatch costs 1, and so does a missing code (MISSING_NOMINAL = 1).
        const a = query[j]!;
        d += a === stored[base + j]! && a >= 0 ? 0 : MISSING_NOMINAL;
      }
      if (d >= limit) continue;
      let i = found < k ? found++ : k - 1;
      while (i > 0 && bestDistance[i - 1]! > d) {
        bestDistance[i] = bestDistance[i - 1]!;
        bestSlot[i] = bestSlot[i - 1]!;
        i--;
      }
      bestDistance[i] = d;
      bestSlot[i] = slot;
      if (found === k) limit = bestDistance[k - 1]!;
    }
    return found;
  }
}
