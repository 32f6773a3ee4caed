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
 * probabilities and predicted class (or, in a regression, the number predicted), the model epoch and the
 * session's time it was served (`Clock.event`).
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
 * store.put('leg-17', rows, 0, verdict, clock.event(), scored);
 * const slot = store.find('leg-17'); // −1 when it is not waiting
 */
export class PendingStore {
  readonly capacity: number;
  readonly width: number;
  private classes: number;
  private readonly values: Float64Array;
  private probabilities: Float64Array;
  private readonly predicted: Int32Array;
  private readonly served: Float64Array;
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
    this.served = new Float64Array(capacity);
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
    this.served[slot] = verdict.value;
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

  /** The number a regression served (NaN for a classification). */
  valueOf(slot: number): number {
    return this.served[slot]!;
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

  /**
   * The store's state, JSON-safe and exact (doubles as base64 of their bytes). Only the live entries are
   * kept — the waiting predictions and the remembered ids still in force, each with its slot — so a
   * nearly empty store of a large capacity makes a small snapshot; `restore` puts them back into a store
   * of the full capacity, slot for slot.
   */
  snapshot(): PendingSnapshot {
    const { width, classes } = this;
    const slots = new Int32Array(this.live);
    const ids: string[] = [];
    for (let k = 0, slot = this.head; k < this.used; k++, slot = slot + 1 === this.capacity ? 0 : slot + 1) {
      const id = this.ids[slot];
      if (id === null || id === undefined) continue;
      slots[ids.length] = slot;
      ids.push(id);
    }
    const values = new Float64Array(ids.length * width);
    const probabilities = new Float64Array(ids.length * classes);
    const predicted = new Int32Array(ids.length);
    const served = new Float64Array(ids.length);
    const epochs = new Int32Array(ids.length);
    const times = new Float64Array(ids.length);
    for (let e = 0; e < ids.length; e++) {
      const slot = slots[e]!;
      values.set(this.values.subarray(slot * width, (slot + 1) * width), e * width);
      probabilities.set(this.probabilities.subarray(slot * classes, (slot + 1) * classes), e * classes);
      predicted[e] = this.predicted[slot]!;
      served[e] = this.served[slot]!;
      epochs[e] = this.epochs[slot]!;
      times[e] = this.times[slot]!;
    }
    // A remembered id is in force where the index points at it; older copies of it are shadowed.
    const goneSlots: number[] = [];
    const goneIds: string[] = [];
    const goneWhy: number[] = [];
    for (const [id, at] of this.gone) {
      goneSlots.push(at);
      goneIds.push(id);
      goneWhy.push(this.goneWhy[at]!);
    }
    return {
      capacity: this.capacity,
      width,
      classes,
      head: this.head,
      used: this.used,
      slots: encodeI32(slots),
      ids,
      values: encodeF64(values),
      probabilities: encodeF64(probabilities),
      predicted: encodeI32(predicted),
      served: encodeF64(served),
      epochs: encodeI32(epochs),
      times: encodeF64(times),
      goneSlots: encodeI32(Int32Array.from(goneSlots)),
      goneIds,
      goneWhy,
      goneAt: this.goneAt,
    };
  }

  static restore(s: PendingSnapshot): PendingStore {
    const what = 'pending store snapshot';
    const bad = (why: string): never => {
      throw new ShoalError('invalid-snapshot', `${what}: ${why}`);
    };
    const whole = (n: unknown, below: number): boolean =>
      Number.isInteger(n) && (n as number) >= 0 && (n as number) < below;
    if (
      !(whole(s.capacity, 2 ** 31) && s.capacity >= 1 && whole(s.width, 2 ** 31) && whole(s.classes, 2 ** 31))
    ) {
      bad('capacity, width and classes must be whole numbers');
    }
    const store = new PendingStore(s.capacity, s.width, s.classes);
    if (!(whole(s.head, s.capacity) && whole(s.used, s.capacity + 1) && whole(s.goneAt, s.capacity))) {
      bad('head, used and goneAt must lie within the capacity');
    }
    if (!(Array.isArray(s.ids) && Array.isArray(s.goneIds) && Array.isArray(s.goneWhy))) {
      bad('ids, goneIds and goneWhy must be lists');
    }
    const n = s.ids.length;
    const sized = (a: Float64Array | Int32Array, length: number, name: string): void => {
      if (a.length !== length) bad(`${name} holds ${a.length} values, expected ${length}`);
    };
    const slots = decodeI32(s.slots, `${what} slots`);
    sized(slots, n, 'slots');
    const values = decodeF64(s.values, `${what} values`);
    sized(values, n * s.width, 'values');
    const probabilities = decodeF64(s.probabilities, `${what} probabilities`);
    sized(probabilities, n * store.classes, 'probabilities');
    const predicted = decodeI32(s.predicted, `${what} predicted`);
    sized(predicted, n, 'predicted');
    const served = decodeF64(s.served, `${what} served`);
    sized(served, n, 'served');
    const epochs = decodeI32(s.epochs, `${what} epochs`);
    sized(epochs, n, 'epochs');
    const times = decodeF64(s.times, `${what} times`);
    sized(times, n, 'times');
    const { width, classes } = store;
    for (let e = 0; e < n; e++) {
      const slot = slots[e]!;
      const id = s.ids[e];
      // A waiting entry lies in the used part of the ring, from head on.
      const within = (slot - s.head + s.capacity) % s.capacity < s.used;
      if (
        !(
          whole(slot, s.capacity) &&
          within &&
          typeof id === 'string' &&
          store.ids[slot] === null &&
          !store.index.has(id)
        )
      ) {
        bad(`entry ${e} (slot ${slot}) is not a free slot of the ring with an id`);
      }
      store.ids[slot] = id as string;
      store.index.set(id as string, slot);
      store.values.set(values.subarray(e * width, (e + 1) * width), slot * width);
      store.probabilities.set(probabilities.subarray(e * classes, (e + 1) * classes), slot * classes);
      store.predicted[slot] = predicted[e]!;
      store.served[slot] = served[e]!;
      store.epochs[slot] = epochs[e]!;
      store.times[slot] = times[e]!;
    }
    store.live = n;
    store.head = s.head;
    store.used = s.used;
    const goneSlots = decodeI32(s.goneSlots, `${what} goneSlots`);
    sized(goneSlots, s.goneIds.length, 'goneSlots');
    if (s.goneWhy.length !== s.goneIds.length)
      bad(`goneWhy holds ${s.goneWhy.length} values, expected ${s.goneIds.length}`);
    for (let e = 0; e < s.goneIds.length; e++) {
      const at = goneSlots[e]!;
      const id = s.goneIds[e];
      const why = s.goneWhy[e];
      const fate = why === GONE_JOINED || why === GONE_EXPIRED || why === GONE_EVICTED;
      if (!(whole(at, s.capacity) && typeof id === 'string' && fate && store.goneIds[at] === null)) {
        bad(`remembered id ${e} (slot ${at}) is not a free slot of the ring with an id and a fate`);
      }
      store.goneIds[at] = id as string;
      store.goneWhy[at] = why as number;
      store.gone.set(id as string, at);
    }
    store.goneAt = s.goneAt;
    return store;
  }
}

export interface PendingSnapshot {
  readonly capacity: number;
  readonly width: number;
  readonly classes: number;
  /** Ring position of the oldest slot, and slots used since (waiting or freed by a join). */
  readonly head: number;
  readonly used: number;
  /** The waiting predictions, oldest first: each one's slot (Int32, base64), id and stored parts. */
  readonly slots: string;
  readonly ids: readonly string[];
  readonly values: string;
  readonly probabilities: string;
  readonly predicted: string;
  /** The numbers a regression served (NaN for a classification). */
  readonly served: string;
  readonly epochs: string;
  readonly times: string;
  /** The remembered ids in force: each one's slot of the ring (Int32, base64), id and fate. */
  readonly goneSlots: string;
  readonly goneIds: readonly string[];
  readonly goneWhy: readonly number[];
  readonly goneAt: number;
}
