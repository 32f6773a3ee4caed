import { decodeF64, encodeF64, ShoalError } from '../core/index.js';
import { orNull } from './figure.js';
import { kappaStatistic } from './kappa.js';
import type { RecordRing } from './record-ring.js';
import { expectObject, readFinite, readInteger } from './snapshot.js';
import type { Tally } from './tally.js';

/**
 * Labels and predictions are class codes below this bound, the same bound the learners keep. The
 * confusion matrix of a view holds classes² doubles, so memory follows the largest code seen.
 */
export const MAX_EVALUATED_CLASSES = 4096;

/** Ring layout of one classification outcome: [label, predicted, no-change hit] and [log-loss]. */
export const OUTCOME_INTS = 3;
export const OUTCOME_FLOATS = 1;

/** Write one outcome into `slot` of `ring` (the layout `ConfusionTally.addFrom` reads). */
export function writeOutcome(
  ring: RecordRing,
  slot: number,
  label: number,
  predicted: number,
  noChangeHit: boolean,
  logLoss: number,
): void {
  const i = slot * OUTCOME_INTS;
  ring.ints[i] = label;
  ring.ints[i + 1] = predicted;
  ring.ints[i + 2] = noChangeHit ? 1 : 0;
  ring.floats[slot * OUTCOME_FLOATS] = logLoss;
}

/** The headline figures of one view; `null` where a figure is undefined (for example 0/0). */
export interface ClassificationFigures {
  /** Records in the view; in the fading view the faded weight N_α = Σ α^(i−k). */
  readonly rows: number;
  readonly classes: number;
  readonly accuracy: number | null;
  readonly kappa: number | null;
  readonly kappaM: number | null;
  readonly kappaNoChange: number | null;
  readonly logLoss: number | null;
  readonly macroF1: number | null;
  /** Per class code: true positives / records predicted as the class. */
  readonly precision: readonly (number | null)[];
  /** Per class code: true positives / records labelled with the class. */
  readonly recall: readonly (number | null)[];
  /** confusion[label][predicted]: records (faded: weight) of true class `label` predicted as `predicted`. */
  readonly confusion: readonly (readonly number[])[];
}

/** What a reader may ask of one view of a classification evaluator. NaN marks an undefined figure. */
export interface ClassificationView {
  /** Class codes known: one more than the largest label or prediction seen or announced. */
  readonly classes: number;
  /** Records in the view (fading view: the faded weight). */
  rows(): number;
  /** Records (faded: weight) of true class `label` predicted as `predicted`. */
  count(label: number, predicted: number): number;
  accuracy(): number;
  kappa(): number;
  kappaM(): number;
  kappaNoChange(): number;
  /** Mean −ln p(true class), each p clipped from below at the evaluator's probability floor. */
  logLoss(): number;
  macroF1(): number;
  precision(classCode: number): number;
  recall(classCode: number): number;
  figures(): ClassificationFigures;
}

export interface ConfusionTallyState {
  readonly classes: number;
  readonly unit: number;
  readonly total: number;
  readonly correct: number;
  readonly noChangeHits: number;
  readonly logLossSum: number;
  /** Base64 of the classes × classes cells, row = label (see `encodeF64`). */
  readonly cells: string;
  readonly labelTotals: string;
  readonly predictedTotals: string;
}

/**
 * A weighted confusion matrix that grows as classes appear, with its row totals (labels), column
 * totals (predictions), the diagonal sum, the no-change classifier's hits and the log-loss sum. Every
 * figure is read from these sums, so one tally serves the cumulative, window and fading views.
 *
 * Definitions (n = total weight, cₖₖ = diagonal cell, rₖ = row total, qₖ = column total):
 * accuracy p₀ = Σ cₖₖ / n; Cohen's κ with p_c = Σ rₖ qₖ / n²; κ-M with p_c = maxₖ rₖ / n, the
 * accuracy of the classifier that always predicts the view's majority class; κ vs no-change with p_c =
 * (no-change hits) / n (see `kappaStatistic` for the sources). Precision cₖₖ / qₖ, recall cₖₖ / rₖ,
 * F1ₖ = 2cₖₖ / (rₖ + qₖ); macro F1 averages F1ₖ over the classes that occur in the view as a label
 * or a prediction (van Rijsbergen, Information Retrieval, 2nd ed., 1979, the F measure with β = 1, from memory).
 */
export class ConfusionTally implements Tally<ConfusionTallyState>, ClassificationView {
  unit = 1;
  private known = 0;
  private capacity = 0;
  private cells: Float64Array = new Float64Array(0);
  private labelTotals: Float64Array = new Float64Array(0);
  private predictedTotals: Float64Array = new Float64Array(0);
  private total = 0;
  private correct = 0;
  private noChangeHits = 0;
  private logLossSum = 0;

  get classes(): number {
    return this.known;
  }

  /** Make room for class codes 0 … n−1 (never shrinks; grows storage by doubling). */
  ensureClasses(n: number): void {
    if (n <= this.known) return;
    if (n > this.capacity) {
      const capacity = Math.max(n, 2 * this.capacity, 2);
      const cells = new Float64Array(capacity * capacity);
      for (let r = 0; r < this.known; r++) {
        const from = r * this.capacity;
        cells.set(this.cells.subarray(from, from + this.known), r * capacity);
      }
      this.cells = cells;
      this.labelTotals = grow(this.labelTotals, capacity);
      this.predictedTotals = grow(this.predictedTotals, capacity);
      this.capacity = capacity;
    }
    this.known = n;
  }

  addFrom(ring: RecordRing, slot: number, weight: number): void {
    const i = slot * OUTCOME_INTS;
    const label = ring.ints[i]!;
    const predicted = ring.ints[i + 1]!;
    const top = Math.max(label, predicted);
    if (top >= this.known) this.ensureClasses(top + 1);
    this.cells[label * this.capacity + predicted]! += weight;
    this.labelTotals[label]! += weight;
    this.predictedTotals[predicted]! += weight;
    this.total += weight;
    if (label === predicted) this.correct += weight;
    if (ring.ints[i + 2] === 1) this.noChangeHits += weight;
    this.logLossSum += weight * ring.floats[slot * OUTCOME_FLOATS]!;
  }

  multiplyAll(factor: number): void {
    const n = this.known;
    for (let r = 0; r < n; r++) {
      const row = r * this.capacity;
      for (let c = 0; c < n; c++) this.cells[row + c]! *= factor;
      this.labelTotals[r]! *= factor;
      this.predictedTotals[r]! *= factor;
    }
    this.total *= factor;
    this.correct *= factor;
    this.noChangeHits *= factor;
    this.logLossSum *= factor;
  }

  clear(): void {
    this.unit = 1;
    this.cells.fill(0);
    this.labelTotals.fill(0);
    this.predictedTotals.fill(0);
    this.total = 0;
    this.correct = 0;
    this.noChangeHits = 0;
    this.logLossSum = 0;
  }

  rows(): number {
    return this.total / this.unit;
  }

  count(label: number, predicted: number): number {
    if (!(label >= 0 && label < this.known && predicted >= 0 && predicted < this.known)) return 0;
    return this.cells[label * this.capacity + predicted]! / this.unit;
  }

  accuracy(): number {
    return this.correct / this.total;
  }

  kappa(): number {
    let chance = 0;
    for (let k = 0; k < this.known; k++) {
      chance += (this.labelTotals[k]! / this.total) * (this.predictedTotals[k]! / this.total);
    }
    return kappaStatistic(this.accuracy(), chance);
  }

  kappaM(): number {
    let majority = 0;
    for (let k = 0; k < this.known; k++) {
      if (this.labelTotals[k]! > majority) majority = this.labelTotals[k]!;
    }
    return kappaStatistic(this.accuracy(), majority / this.total);
  }

  kappaNoChange(): number {
    return kappaStatistic(this.accuracy(), this.noChangeHits / this.total);
  }

  logLoss(): number {
    // A sum of non-negative losses; after the window takes records out it may hold a rounding residue.
    return Math.max(0, this.logLossSum) / this.total;
  }

  macroF1(): number {
    let sum = 0;
    let present = 0;
    for (let k = 0; k < this.known; k++) {
      const margins = this.labelTotals[k]! + this.predictedTotals[k]!;
      if (margins > 0) {
        sum += (2 * this.cells[k * this.capacity + k]!) / margins;
        present++;
      }
    }
    return sum / present;
  }

  precision(classCode: number): number {
    return this.diagonalShare(classCode, this.predictedTotals);
  }

  recall(classCode: number): number {
    return this.diagonalShare(classCode, this.labelTotals);
  }

  figures(): ClassificationFigures {
    const codes = Array.from({ length: this.known }, (_, k) => k);
    return {
      rows: this.rows(),
      classes: this.known,
      accuracy: orNull(this.accuracy()),
      kappa: orNull(this.kappa()),
      kappaM: orNull(this.kappaM()),
      kappaNoChange: orNull(this.kappaNoChange()),
      logLoss: orNull(this.logLoss()),
      macroF1: orNull(this.macroF1()),
      precision: codes.map((k) => orNull(this.precision(k))),
      recall: codes.map((k) => orNull(this.recall(k))),
      confusion: codes.map((label) => codes.map((predicted) => this.count(label, predicted))),
    };
  }

  state(): ConfusionTallyState {
    const n = this.known;
    const compact = new Float64Array(n * n);
    for (let r = 0; r < n; r++) {
      compact.set(this.cells.subarray(r * this.capacity, r * this.capacity + n), r * n);
    }
    return {
      classes: n,
      unit: this.unit,
      total: this.total,
      correct: this.correct,
      noChangeHits: this.noChangeHits,
      logLossSum: this.logLossSum,
      cells: encodeF64(compact),
      labelTotals: encodeF64(this.labelTotals.subarray(0, n)),
      predictedTotals: encodeF64(this.predictedTotals.subarray(0, n)),
    };
  }

  load(state: ConfusionTallyState): void {
    const what = 'confusion tally';
    expectObject(state, what);
    const n = readInteger(state, 'classes', what);
    const unit = readFinite(state, 'unit', what);
    const cells = decodeF64(state.cells, `${what} cells`);
    const labelTotals = decodeF64(state.labelTotals, `${what} labelTotals`);
    const predictedTotals = decodeF64(state.predictedTotals, `${what} predictedTotals`);
    if (
      n > MAX_EVALUATED_CLASSES ||
      !(unit > 0) ||
      cells.length !== n * n ||
      labelTotals.length !== n ||
      predictedTotals.length !== n
    ) {
      throw new ShoalError('invalid-snapshot', `${what}: ${n} classes do not fit the stored arrays or unit`);
    }
    this.known = 0;
    this.clear();
    this.ensureClasses(n);
    for (let r = 0; r < n; r++) this.cells.set(cells.subarray(r * n, r * n + n), r * this.capacity);
    this.labelTotals.set(labelTotals);
    this.predictedTotals.set(predictedTotals);
    this.unit = unit;
    this.total = readFinite(state, 'total', what);
    this.correct = readFinite(state, 'correct', what);
    this.noChangeHits = readFinite(state, 'noChangeHits', what);
    this.logLossSum = readFinite(state, 'logLossSum', what);
  }

  private diagonalShare(classCode: number, totals: Float64Array): number {
    if (!(Number.isInteger(classCode) && classCode >= 0 && classCode < this.known)) return Number.NaN;
    const total = totals[classCode]!;
    return total > 0 ? this.cells[classCode * this.capacity + classCode]! / total : Number.NaN;
  }
}

function grow(values: Float64Array, capacity: number): Float64Array {
  const out = new Float64Array(capacity);
  out.set(values);
  return out;
}
