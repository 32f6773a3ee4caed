import { decodeF64, encodeF64, ShoalError, welfordAdd } from '../core/index.js';
import { orNull } from './figure.js';
import type { RecordRing } from './record-ring.js';
import { expectObject, readFinite } from './snapshot.js';
import type { Tally } from './tally.js';

/** Ring layout of one regression outcome: [predicted, target]. */
export const PAIR_FLOATS = 2;

/** Write one outcome into `slot` of `ring` (the layout `RegressionTally.addFrom` reads). */
export function writePair(ring: RecordRing, slot: number, predicted: number, target: number): void {
  ring.floats[slot * PAIR_FLOATS] = predicted;
  ring.floats[slot * PAIR_FLOATS + 1] = target;
}

/** The headline figures of one regression view; `null` where a figure is undefined. */
export interface RegressionFigures {
  /** Records in the view; in the fading view the faded weight N_α = Σ α^(i−k). */
  readonly rows: number;
  readonly mae: number | null;
  readonly rmse: number | null;
  readonly r2: number | null;
}

/** What a reader may ask of one view of a regression evaluator. NaN marks an undefined figure. */
export interface RegressionView {
  rows(): number;
  mae(): number;
  rmse(): number;
  r2(): number;
  figures(): RegressionFigures;
}

export interface RegressionTallyState {
  readonly unit: number;
  /** Base64 of [weight, target mean, Σ w(y − ȳ)², Σ w|e|, Σ w e², removal error bound] (`encodeF64`). */
  readonly sums: string;
}

const SLOTS = 6;
/** Rounding allowance per removal, in units of the magnitudes involved (generous: 16 ulps). */
const REMOVAL_ROUNDING = 16 * Number.EPSILON;

/**
 * Weighted sums for regression error, with e = target − prediction and weights as the view gives
 * them: MAE = Σ w|e| / Σ w, RMSE = √(Σ w e² / Σ w), and the coefficient of determination
 * R² = 1 − Σ w e² / Σ w (y − ȳ)², with ȳ the view's (weighted) mean target (the textbook
 * definitions, e.g. Draper & Smith, Applied Regression Analysis, 3rd ed., 1998, from memory). The spread
 * of the targets is kept with the weighted Welford update (West 1979, `welfordAdd`), which also takes
 * a record out again with weight −1. Taking out cancels digits, so each removal adds a bound on the
 * rounding it may have left in Σ w(y − ȳ)²; while the spread is within that bound the view cannot
 * tell it from zero (a window of identical targets), and R² is undefined, as it is when every target
 * in the view is the same. Adding is stable and adds nothing to the bound, so only a window (rebuilt
 * from its ring every w records, which clears the bound) is ever affected.
 */
export class RegressionTally implements Tally<RegressionTallyState>, RegressionView {
  unit = 1;
  private readonly sums = new Float64Array(SLOTS);

  addFrom(ring: RecordRing, slot: number, weight: number): void {
    const s = this.sums;
    if (s[0]! + weight <= 0) {
      // The view's last record left it (a window of one): start from empty, not from 0/0.
      s.fill(0);
      return;
    }
    const predicted = ring.floats[slot * PAIR_FLOATS]!;
    const target = ring.floats[slot * PAIR_FLOATS + 1]!;
    const mean = s[1]!;
    const spread = s[2]!;
    welfordAdd(s, 0, target, weight);
    if (weight < 0) {
      // |Δ spread| = |w (y − ȳ)(y − ȳ')| ≤ |w| (|y| + |ȳ|)(|y| + |ȳ'|), each factor with its rounding.
      const magnitude =
        Math.abs(spread) -
        weight * (Math.abs(target) + Math.abs(mean)) * (Math.abs(target) + Math.abs(s[1]!));
      s[5]! += REMOVAL_ROUNDING * magnitude;
    }
    const e = target - predicted;
    s[3]! += weight * Math.abs(e);
    s[4]! += weight * e * e;
  }

  multiplyAll(factor: number): void {
    const s = this.sums;
    s[0]! *= factor;
    s[2]! *= factor;
    s[3]! *= factor;
    s[4]! *= factor;
    s[5]! *= factor;
  }

  clear(): void {
    this.unit = 1;
    this.sums.fill(0);
  }

  rows(): number {
    return this.sums[0]! / this.unit;
  }

  // Sums of non-negative terms; a window that took records out may hold −0 or a negative rounding residue.
  mae(): number {
    return Math.max(0, this.sums[3]!) / this.sums[0]!;
  }

  rmse(): number {
    return Math.sqrt(Math.max(0, this.sums[4]!) / this.sums[0]!);
  }

  r2(): number {
    const spread = this.sums[2]!;
    return spread > this.sums[5]! ? 1 - Math.max(0, this.sums[4]!) / spread : Number.NaN;
  }

  figures(): RegressionFigures {
    return { rows: this.rows(), mae: orNull(this.mae()), rmse: orNull(this.rmse()), r2: orNull(this.r2()) };
  }

  state(): RegressionTallyState {
    return { unit: this.unit, sums: encodeF64(this.sums) };
  }

  load(state: RegressionTallyState): void {
    const what = 'regression tally';
    expectObject(state, what);
    const unit = readFinite(state, 'unit', what);
    const sums = decodeF64(state.sums, `${what} sums`);
    if (!(unit > 0) || sums.length !== SLOTS) {
      throw new ShoalError('invalid-snapshot', `${what}: needs a unit > 0 and ${SLOTS} sums`);
    }
    this.unit = unit;
    this.sums.set(sums);
  }
}
