import { RecordRing, type RecordRingState } from './record-ring.js';
import { expectObject } from './snapshot.js';
import type { Tally } from './tally.js';

/** When the fading view's unit passes this, its sums are rescaled (2^256; far from overflow). */
const RESCALE_AT = 2 ** 256;

/**
 * The three views of prequential (test-then-train) evaluation of Gama, Sebastião & Rodrigues,
 * "On evaluating stream learning algorithms", Machine Learning 90, 2013, kept side by side over the
 * same records:
 *
 * - cumulative: every record since the start, P(i) = (1/i) Σₖ₌₁..ᵢ Lₖ;
 * - sliding window of the last w records, P_w(i) = (1/w) Σₖ₌ᵢ₋w₊₁..ᵢ Lₖ;
 * - fading factor α ∈ (0, 1]: P_α(i) = S_α(i) / N_α(i) with S_α(i) = Lᵢ + α S_α(i−1) and
 *   N_α(i) = 1 + α N_α(i−1), i.e. record k weighs α^(i−k); α = 1 is the cumulative view.
 *
 * Here every sum a tally keeps (a confusion cell, a class total, a loss sum) is weighted the same way,
 * so κ, F1 and the rest follow the paper's definition of each view.
 *
 * Cost per record: O(1) for the cumulative and fading views; O(1) amortised for the window, whose
 * oldest record is taken out (weight −1) as a new one comes in, and whose tally is rebuilt from the
 * ring each time the ring wraps, so that sums of doubles cannot drift by add-and-subtract rounding.
 * The fading view does not multiply every stored sum by α per record (a confusion matrix would make
 * that O(classes²)): it adds the new record with weight α^−i instead, and figures divide by that
 * `unit`; when the unit grows past 2^256 everything is rescaled once, which amortises to O(1).
 *
 * A caller writes a record in three steps: `open()` gives the ring slot (taking the oldest record
 * out of the window if the ring is full), the caller fills the slot, `close(slot)` adds it to all
 * three views.
 */
export class PrequentialViews<S, T extends Tally<S>> {
  readonly cumulative: T;
  readonly window: T;
  readonly fading: T;
  readonly ring: RecordRing;
  readonly fadingFactor: number;

  constructor(
    make: () => T,
    windowSize: number,
    fadingFactor: number,
    intsPerRecord: number,
    floatsPerRecord: number,
  ) {
    this.cumulative = make();
    this.window = make();
    this.fading = make();
    this.ring = new RecordRing(windowSize, intsPerRecord, floatsPerRecord);
    this.fadingFactor = fadingFactor;
  }

  /** The slot to write the next record into; the window's oldest record leaves it first. */
  open(): number {
    const slot = this.ring.head;
    if (this.ring.full) this.window.addFrom(this.ring, slot, -1);
    return slot;
  }

  /** Add the record written into `slot` to every view. */
  close(slot: number): void {
    const ring = this.ring;
    this.cumulative.addFrom(ring, slot, 1);
    this.window.addFrom(ring, slot, 1);
    this.fading.addFrom(ring, slot, this.age());
    ring.advance();
    if (ring.head === 0) this.rebuildWindow();
  }

  clear(): void {
    this.cumulative.clear();
    this.window.clear();
    this.fading.clear();
    this.ring.reset();
  }

  state(): PrequentialViewsState<S> {
    return {
      cumulative: this.cumulative.state(),
      window: this.window.state(),
      fading: this.fading.state(),
      ring: this.ring.state(),
    };
  }

  load(state: PrequentialViewsState<S>): void {
    expectObject(state, 'prequential views');
    this.ring.load(state.ring);
    this.cumulative.load(state.cumulative);
    this.window.load(state.window);
    this.fading.load(state.fading);
  }

  /** Age the fading view by one record and return the weight of the new record. */
  private age(): number {
    const fading = this.fading;
    if (fading.unit > RESCALE_AT) {
      fading.multiplyAll(1 / fading.unit);
      fading.unit = 1;
    }
    fading.unit /= this.fadingFactor;
    return fading.unit;
  }

  /** The ring has just wrapped, so its slots 0 … w−1 hold the window oldest first. */
  private rebuildWindow(): void {
    const window = this.window;
    window.clear();
    for (let slot = 0; slot < this.ring.capacity; slot++) window.addFrom(this.ring, slot, 1);
  }
}

export interface PrequentialViewsState<S> {
  readonly cumulative: S;
  readonly window: S;
  readonly fading: S;
  readonly ring: RecordRingState;
}
