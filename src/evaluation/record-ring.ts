import { decodeF64, decodeI32, encodeF64, encodeI32, integerAtLeast, ShoalError } from '../core/index.js';
import { readInteger } from './snapshot.js';

/**
 * A fixed-capacity ring of the last `capacity` records, each `intsPerRecord` integers and
 * `floatsPerRecord` doubles stored side by side in two typed arrays (no object per record). The
 * sliding-window view of prequential evaluation keeps its records here, so that the oldest one can be
 * taken out of the window's sums when a new one comes in (Gama, Sebastião & Rodrigues, "On evaluating
 * stream learning algorithms", Machine Learning 90, 2013, the windowed prequential error).
 *
 * Writers fill the slot at `head` and then call `advance()`; when the ring is `full`, the slot at
 * `head` still holds the oldest record until it is overwritten.
 */
export class RecordRing {
  readonly capacity: number;
  readonly intsPerRecord: number;
  readonly floatsPerRecord: number;
  readonly ints: Int32Array;
  readonly floats: Float64Array;
  private headSlot = 0;
  private stored = 0;

  constructor(capacity: number, intsPerRecord: number, floatsPerRecord: number) {
    this.capacity = integerAtLeast('record ring', 'capacity', capacity);
    this.intsPerRecord = integerAtLeast('record ring', 'intsPerRecord', intsPerRecord, 0);
    this.floatsPerRecord = integerAtLeast('record ring', 'floatsPerRecord', floatsPerRecord, 0);
    this.ints = new Int32Array(capacity * intsPerRecord);
    this.floats = new Float64Array(capacity * floatsPerRecord);
  }

  /** The slot the next record is written to (the oldest record's slot when the ring is full). */
  get head(): number {
    return this.headSlot;
  }

  /** Records held, at most `capacity`. */
  get size(): number {
    return this.stored;
  }

  get full(): boolean {
    return this.stored === this.capacity;
  }

  /** Mark the slot at `head` as written and move on. */
  advance(): void {
    this.headSlot = this.headSlot + 1 === this.capacity ? 0 : this.headSlot + 1;
    if (this.stored < this.capacity) this.stored++;
  }

  reset(): void {
    this.headSlot = 0;
    this.stored = 0;
    this.ints.fill(0);
    this.floats.fill(0);
  }

  state(): RecordRingState {
    return {
      capacity: this.capacity,
      head: this.headSlot,
      size: this.stored,
      ints: encodeI32(this.ints),
      floats: encodeF64(this.floats),
    };
  }

  /** Load a state taken with `state()` from a ring of the same shape. */
  load(state: RecordRingState): void {
    const what = 'record ring';
    if (readInteger(state, 'capacity', what) !== this.capacity) {
      throw new ShoalError(
        'invalid-snapshot',
        `${what}: the snapshot holds ${String(state.capacity)} records, this ring ${this.capacity}`,
      );
    }
    const head = readInteger(state, 'head', what);
    const size = readInteger(state, 'size', what);
    const ints = decodeI32(state.ints, `${what} ints`);
    const floats = decodeF64(state.floats, `${what} floats`);
    if (
      head >= this.capacity ||
      size > this.capacity ||
      (size < this.capacity && head !== size) ||
      ints.length !== this.ints.length ||
      floats.length !== this.floats.length
    ) {
      throw new ShoalError('invalid-snapshot', `${what}: head, size or array lengths do not fit the ring`);
    }
    this.ints.set(ints);
    this.floats.set(floats);
    this.headSlot = head;
    this.stored = size;
  }
}

export interface RecordRingState {
  readonly capacity: number;
  readonly head: number;
  readonly size: number;
  /** Base64 of the integer fields (see `encodeI32`). */
  readonly ints: string;
  /** Base64 of the double fields (see `encodeF64`). */
  readonly floats: string;
}
