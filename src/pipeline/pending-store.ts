import { decodeF64, decodeI32, encodeF64, encodeI32, ShoalError } from '../core/index.js';
import type { Verdict } from '../ensembles/index.js';

/** What became of a prediction that left the store, as remembered for labels that come after. */
export const GONE_JOINED = 1;
export const GONE_EXPIRED = 2;
export const GONE_EVICTED = 3;
export type Gone = 0 | typeof GONE_JOINED | typeof GONE_EXPIRED | typeof GONE_EVICTED;

/**
 * Predictions waiting for their labels, joined by event id. Each entry keeps what a late label needs
 * to judge the prediction that was served and to train on the row: the row's values, the served class
 * probabilities and predicted class, the model epoch and the wall-clock time it was served.
 *
 * Bounds (both settings):
 * - count: entries sit in a ring of `capacity` slots in the order they were scored; a prediction is
 *   evicted once `capacity` newer predictions have been made (a slot freed by a join is reused only
 *   when the ring comes round to it), so at most `capacity` predictions wait at any time;
 * - age: `expire(cutoff)` drops every prediction served before `cutoff`, oldest first.
 * Expiries and evictions are returned and counted, never silent.
 *
 * Memory: every buffer is allocated up front (values, probabilities, epochs, times); the ids are the
 * frame's own strings, held only while their entry waits. A second ring of the same size remembers the
 * ids of the last `capacity` predictions that left the store and why (joined, expired, evicted; a row
 * judged with its own label counts as joined), so a label that comes after can be told apart from one
 * whose id was never scored; older ids are forgotten,
 * and a label for one counts as unknown. Both index maps hold at most `capacity` keys each, so the store
 * never grows without bound whatever arrives. Per row, nothing is allocated beyond the maps' own
 * amortised upkeep.
 *
 * @example
 * const store = new PendingStore(100_000, schema.features.length, 2);
 * store.put('leg-17', rows, 0, verdict, clock.wall(), scored);
 * const slot = store.find('leg-17'); // −1 when it is not waiting
 */
export class PendingStore {
  readonly capacity: number;
  readonly width: number;
  private classes: number;
  private readonly values: Float64Array;
  private probabilities: Float64Array;
  private readonly predicted: Int32Array;
  private readonly epochs: Int32Array;
  private readonly times: Float64Array;
  private readonly ids: (string | null)[];
  private readonly index = new Map<string, number>();
  /** Ring position of the oldest slot, and slots used since (waiting or freed by a join). */
  private head = 0;
  private used = 0;
  private live = 0;
  private readonly goneIds: (string | null)[];
  private readonly goneWhy: Uint8Array;
  private readonly gone = new Map<string, number>();
  private goneAt = 0;

  constructor(capacity: number, width: number, classes: number) {
    if (!(Number.isInteger(capacity) && capacity >= 1)) {
      throw new ShoalError(
        'invalid-parameter',
        `pending store: capacity must be an integer ≥ 1, got ${capacity}`,
      );
    }
    this.capacity = capacity;
    this.width = width;
    this.classes = Math.max(1, classes);
    this.values = new Float64Array(capacity * width);
    this.probabilities = new Float64Array(capacity * this.classes);
    this.predicted = new Int32Array(capacity);
    this.epochs = new Int32Array(capacity);
    this.times = new Float64Array(capacity);
    this.ids = new Array<string | null>(capacity).fill(null);
    this.goneIds = new Array<string | null>(capacity).fill(null);
    this.goneWhy = new Uint8Array(capacity);
  }

  /** Predictions waiting now. */
  get size(): number {
    return this.live;
  }

  /** Room for `n` class probabilities per entry (a new class is rare: one reallocation). */
  ensureClasses(n: number): void {
    if (n <= this.classes) return;
    const wider = new Float64Array(this.capacity * n);
    for (let s = 0; s < this.capacity; s++) {
      wider.set(this.probabilities.subarray(s * this.classes, (s + 1) * this.classes), s * n);
    }
    this.probabilities = wider;
    this.classes = n;
  }

  /**
   * Keep the prediction served for row `offset` of `row` under `id`. Returns what had to leave to make
   * room: `GONE_EVICTED` when the oldest waiting prediction was evicted (or an earlier prediction for
   * the same id was replaced), 0 otherwise.
   */
  put(id: string, row: Float64Array, offset: number, verdict: Verdict, time: number): Gone {
    let evicted: Gone = 0;
    const earlier = this.index.get(id);
    if (earlier !== undefined) {
      this.leave(earlier, GONE_EVICTED);
      evicted = GONE_EVICTED;
    }
    if (this.used === this.capacity) {
      const oldest = this.head;
      if (this.ids[oldest] !== null) {
        this.leave(oldest, GONE_EVICTED);
        evicted = GONE_EVICTED;
      }
      this.head = oldest + 1 === this.capacity ? 0 : oldest + 1;
      this.used--;
    }
    let slot = this.head + this.used;
    if (slot >= this.capacity) slot -= this.capacity;
    this.used++;
    this.live++;
    this.ids[slot] = id;
    this.index.set(id, slot);
    const width = this.width;
    this.values.set(row.subarray(offset, offset + width), slot * width);
    const c = this.classes;
    const n = Math.min(verdict.classes, c);
    const base = slot * c;
    for (let k = 0; k < c; k++) this.probabilities[base + k] = k < n ? verdict.probabilities[k]! : 0;
    this.predicted[slot] = verdict.predicted;
    this.epochs[slot] = verdict.epoch;
    this.times[slot] = time;
    return evicted;
  }

  /** The slot of the prediction waiting under `id`, or −1. */
  find(id: string): number {
    return this.index.get(id) ?? -1;
  }

  /** What became of `id` when it is no longer waiting: joined, expired, evicted, or 0 (not remembered). */
  fate(id: string): Gone {
    const at = this.gone.get(id);
    return at === undefined ? 0 : (this.goneWhy[at] as Gone);
  }

  /** The stored row of a slot, read in place as (`rows`, `offsetOf(slot)`). */
  get rows(): Float64Array {
    return this.values;
  }

  offsetOf(slot: number): number {
    return slot * this.width;
  }

  /** The probability the served prediction gave class `label` (0 for a class unknown when served). */
  probability(slot: number, label: number): number {
    return label < this.classes ? this.probabilities[slot * this.classes + label]! : 0;
  }

  predictedOf(slot: number): number {
    return this.predicted[slot]!;
  }

  epochOf(slot: number): number {
    return this.epochs[slot]!;
  }

  timeOf(slot: number): number {
    return this.times[slot]!;
  }

  /**
   * A row with id `id` came with its label and was judged at once: a later label for it is a duplicate.
   * An earlier prediction still waiting under the same id is replaced (returned as `GONE_EVICTED`).
   */
  settled(id: string): Gone {
    const earlier = this.index.get(id);
    if (earlier !== undefined) this.leave(earlier, GONE_EVICTED);
    this.remember(id, GONE_JOINED);
    return earlier === undefined ? 0 : GONE_EVICTED;
  }

  /** The prediction in `slot` was joined to its label: it leaves the store. */
  joined(slot: number): void {
    this.leave(slot, GONE_JOINED);
  }

  /**
   * Drop every prediction served before `cutoff` (oldest first); returns how many expired. Slots freed
   * by joins at the old end are passed over on the way.
   */
  expire(cutoff: number): number {
    let expired = 0;
    while (this.used > 0) {
      const oldest = this.head;
      if (this.ids[oldest] !== null) {
        if (!(this.times[oldest]! < cutoff)) break;
        this.leave(oldest, GONE_EXPIRED);
        expired++;
      }
      this.head = oldest + 1 === this.capacity ? 0 : oldest + 1;
      this.used--;
    }
    return expired;
  }

  private leave(slot: number, why: Gone): void {
    const id = this.ids[slot]!;
    this.index.delete(id);
    this.ids[slot] = null;
    this.live--;
    this.remember(id, why);
  }

  private remember(id: string, why: Gone): void {
    const at = this.goneAt;
    const old = this.goneIds[at];
    if (old !== null && old !== undefined && this.gone.get(old) === at) this.gone.delete(old);
    this.goneIds[at] = id;
    this.goneWhy[at] = why;
    this.gone.set(id, at);
    this.goneAt = at + 1 === this.capacity ? 0 : at + 1;
  }

  /** The store's state, JSON-safe and exact (doubles as base64 of their bytes). */
  snapshot(): PendingSnapshot {
    return {
      capacity: this.capacity,
      width: this.width,
      classes: this.classes,
      head: this.head,
      used: this.used,
      ids: [...this.ids],
      values: encodeF64(this.values),
      probabilities: encodeF64(this.probabilities),
      predicted: encodeI32(this.predicted),
      epochs: encodeI32(this.epochs),
      times: encodeF64(this.times),
      goneIds: [...this.goneIds],
      goneWhy: Array.from(this.goneWhy),
      goneAt: this.goneAt,
    };
  }

  static restore(s: PendingSnapshot): PendingStore {
    const store = new PendingStore(s.capacity, s.width, s.classes);
    const what = 'pending store snapshot';
    const fits =
      Array.isArray(s.ids) &&
      s.ids.length === s.capacity &&
      Array.isArray(s.goneIds) &&
      s.goneIds.length === s.capacity &&
      Array.isArray(s.goneWhy) &&
      s.goneWhy.length === s.capacity &&
      Number.isInteger(s.head) &&
      s.head >= 0 &&
      s.head < s.capacity &&
      Number.isInteger(s.used) &&
      s.used >= 0 &&
      s.used <= s.capacity &&
      Number.isInteger(s.goneAt) &&
      s.goneAt >= 0 &&
      s.goneAt < s.capacity;
    if (!fits) throw new ShoalError('invalid-snapshot', `${what}: rings do not match the capacity`);
    const sized = (a: Float64Array | Int32Array, n: number, name: string): void => {
      if (a.length !== n)
        throw new ShoalError('invalid-snapshot', `${what}: ${name} holds ${a.length} values, expected ${n}`);
    };
    const values = decodeF64(s.values, `${what} values`);
    sized(values, s.capacity * s.width, 'values');
    const probabilities = decodeF64(s.probabilities, `${what} probabilities`);
    sized(probabilities, s.capacity * store.classes, 'probabilities');
    const predicted = decodeI32(s.predicted, `${what} predicted`);
    sized(predicted, s.capacity, 'predicted');
    const epochs = decodeI32(s.epochs, `${what} epochs`);
    sized(epochs, s.capacity, 'epochs');
    const times = decodeF64(s.times, `${what} times`);
    sized(times, s.capacity, 'times');
    store.values.set(values);
    store.probabilities.set(probabilities);
    store.predicted.set(predicted);
    store.epochs.set(epochs);
    store.times.set(times);
    store.head = s.head;
    store.used = s.used;
    s.ids.forEach((id, slot) => {
      if (id === null) return;
      store.ids[slot] = id;
      store.index.set(id, slot);
      store.live++;
    });
    // Oldest first, so that an id remembered twice maps to its latest fate.
    for (let k = 0; k < s.capacity; k++) {
      const at = (s.goneAt + k) % s.capacity;
      const id = s.goneIds[at];
      if (id === null || id === undefined) continue;
      store.goneIds[at] = id;
      store.goneWhy[at] = s.goneWhy[at]!;
      store.gone.set(id, at);
    }
    store.goneAt = s.goneAt;
    return store;
  }
}

export interface PendingSnapshot {
  readonly capacity: number;
  readonly width: number;
  readonly classes: number;
  readonly head: number;
  readonly used: number;
  readonly ids: readonly (string | null)[];
  readonly values: string;
  readonly probabilities: string;
  readonly predicted: string;
  readonly epochs: string;
  readonly times: string;
  readonly goneIds: readonly (string | null)[];
  readonly goneWhy: readonly number[];
  readonly goneAt: number;
}
