import type { RecordRing } from './record-ring.js';

/**
 * The contract between the prequential views and what they count. A tally sums records read from a
 * `RecordRing` slot, each with a weight (+1 to add, −1 to take a record out of a window, a growing
 * weight in the fading view). Every figure a tally reports is either a ratio of its sums or a sum
 * divided by `unit`, so that scaling every stored sum by one factor changes no figure.
 */
export interface Tally<S> {
  /** Stored units per unit of record weight: 1, except in the fading view (see `PrequentialViews`). */
  unit: number;
  /** Add the record in `slot` of `ring` with `weight`. */
  addFrom(ring: RecordRing, slot: number, weight: number): void;
  /** Multiply every stored sum by `factor` (`unit` is left to the caller). */
  multiplyAll(factor: number): void;
  /** Forget every record and set `unit` to 1; the shape (for example the class count) stays. */
  clear(): void;
  /** Everything needed to rebuild the tally exactly, JSON-safe. */
  state(): S;
  /** Load a state taken with `state()`; throws `invalid-snapshot` on a malformed one. */
  load(state: S): void;
}
