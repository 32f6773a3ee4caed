import { decodeF64, encodeF64, ShoalError, welfordAdd } from '../core/index.js';
import {
  mergeTriple,
  type SplitCandidate,
  subtractTriple,
  varianceReduction,
} from './hoeffding-regression-tree-split.js';
import { doubledRoom } from './typed-arrays.js';

/**
 * The split-point store of one numeric feature in one leaf: the distinct values observed, each with the
 * (weight, mean, M2) of the targets of the rows that carried it, after the extended binary search tree
 * (E-BST) of Ikonomovska, Gama & Džeroski, "Learning model trees from evolving data streams", DMKD 23,
 * 2011. One pass in value order yields, for every cut between neighbouring values, the statistics of
 * the rows at or below the cut, and so every candidate split's variance reduction.
 *
 * Memory is bounded: once `limit` values are held, a new value joins the nearest value already held
 * (the one below it when both are as near), so the store degrades into a set of at most `limit`
 * candidate cut points instead of growing. The E-BST finds that value as the last node on its search
 * path on either side; the store keeps its values sorted in one typed array and finds both neighbours
 * by a binary search, the same values, so a full store of 64 reads a few cache lines where the tree's
 * path of linked nodes read one line a node (on Friedman #1 the trees' `add` was about 60% of a
 * regression bagging's time). A value new to a store that is not full shifts the ones above it; that
 * happens at most `limit` times a store. Storage grows by doubling: the values, and their triples.
 */

/** Doubles a value takes: itself and its target triple. */
const VALUE_BYTES = 8 * 4;
/** The room a store starts with (or the limit, when smaller). */
const FIRST_ROOM = 16;

export interface ValueStoreState {
  /** The values held, ascending. */
  readonly values: string;
  /** The (weight, mean, M2) triple of each value, in the same order. */
  readonly triples: string;
  readonly total: string;
}

/** The running triple of the rows below a cut, reused by every `bestSplit`. */
const PREFIX = new Float64Array(3);

export class ValueStore {
  private values: Float64Array;
  private triples: Float64Array;
  private size = 0;
  /** Triple of every row added (the feature's present rows). */
  private readonly total = new Float64Array(3);

  constructor(private readonly limit: number) {
    const room = doubledRoom(FIRST_ROOM, 1, limit);
    this.values = new Float64Array(room);
    this.triples = new Float64Array(3 * room);
  }

  /** Number of distinct values held. */
  get count(): number {
    return this.size;
  }

  /** Total weight of the rows added. */
  get weight(): number {
    return this.total[0]!;
  }

  /**
   * Record value `x` (finite) with target `y` and weight `w` > 0; returns the bytes the store grew by
   * (0 but when a new value doubles its room), so that its tree keeps its size without summing every store.
   */
  add(x: number, y: number, w: number): number {
    welfordAdd(this.total, 0, y, w);
    const values = this.values;
    const size = this.size;
    // The first index whose value is ≥ x (size when there is none).
    let at = 0;
    let span = size;
    while (span > 0) {
      const half = span >> 1;
      if (values[at + half]! < x) {
        at += half + 1;
        span -= half + 1;
      } else span = half;
    }
    if (at < size && values[at] === x) {
      welfordAdd(this.triples, 3 * at, y, w);
      return 0;
    }
    if (size < this.limit) {
      const room = values.length;
      this.insert(at, x);
      welfordAdd(this.triples, 3 * at, y, w);
      return (this.values.length - room) * VALUE_BYTES;
    }
    // Full: join the nearer neighbour, the lower one on a tie.
    const below = at - 1;
    const target = below < 0 ? at : at === size ? below : x - values[below]! <= values[at]! - x ? below : at;
    welfordAdd(this.triples, 3 * target, y, w);
    return 0;
  }

  /**
   * The cut with the largest variance reduction among the rows added: writes its threshold (the
   * midpoint between the neighbouring values, x ≤ threshold going left) and both sides' triples into
   * `out`, and returns the reduction (0 when fewer than two values are held).
   */
  bestSplit(out: SplitCandidate): number {
    if (this.size < 2) return 0;
    const values = this.values;
    const triples = this.triples;
    const wp = this.total[0]!;
    const mp = this.total[1]!;
    const prefix = PREFIX.fill(0);
    let best = 0;
    let previous = 0;
    for (let i = 0; i < this.size; i++) {
      const key = values[i]!;
      if (prefix[0]! > 0) {
        const vr = varianceReduction(prefix[0]!, prefix[1]!, wp, mp);
        if (vr > best) {
          best = vr;
          out.threshold = previous + (key - previous) / 2;
          out.left.set(prefix);
        }
      }
      mergeTriple(prefix, 0, triples, 3 * i);
      previous = key;
    }
    if (best > 0) subtractTriple(this.total, 0, out.left, 0, out.right);
    return best;
  }

  sizeBytes(): number {
    return this.values.byteLength + this.triples.byteLength + this.total.byteLength + 32;
  }

  state(): ValueStoreState {
    return {
      values: encodeF64(this.values.subarray(0, this.size)),
      triples: encodeF64(this.triples.subarray(0, 3 * this.size)),
      total: encodeF64(this.total),
    };
  }

  static fromState(limit: number, state: ValueStoreState, what: string): ValueStore {
    const values = decodeF64(state?.values, `${what} values`);
    const triples = decodeF64(state?.triples, `${what} triples`);
    const total = decodeF64(state?.total, `${what} total`);
    const size = values.length;
    const bad = (reason: string): never => {
      throw new ShoalError('invalid-snapshot', `${what}: ${reason}`);
    };
    if (triples.length !== 3 * size) bad('values and triples disagree in length');
    if (size > limit) bad(`${size} values exceed the limit of ${limit}`);
    if (total.length !== 3) bad('the total must be one (weight, mean, M2) triple');
    for (let i = 0; i < size; i++) {
      if (!Number.isFinite(values[i]!) || (i > 0 && !(values[i]! > values[i - 1]!)))
        bad(`value ${i} is not finite and above the one before`);
    }
    const store = new ValueStore(limit);
    // The room the original had, so both report one size and the tree's byte limit acts at the same rows.
    store.grow(doubledRoom(FIRST_ROOM, size, limit));
    store.values.set(values);
    store.triples.set(triples);
    store.total.set(total);
    store.size = size;
    return store;
  }

  /** Put the new value `x` at index `at`, the values from there on moving up one, with an empty triple. */
  private insert(at: number, x: number): void {
    if (this.size === this.values.length) this.grow(doubledRoom(FIRST_ROOM, this.size + 1, this.limit));
    const values = this.values;
    const triples = this.triples;
    values.copyWithin(at + 1, at, this.size);
    triples.copyWithin(3 * (at + 1), 3 * at, 3 * this.size);
    values[at] = x;
    triples[3 * at] = 0;
    triples[3 * at + 1] = 0;
    triples[3 * at + 2] = 0;
    this.size++;
  }

  /** Room for `room` values. */
  private grow(room: number): void {
    if (room <= this.values.length) return;
    const values = new Float64Array(room);
    values.set(this.values);
    const triples = new Float64Array(3 * room);
    triples.set(this.triples);
    this.values = values;
    this.triples = triples;
  }
}
