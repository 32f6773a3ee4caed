import type { FeatureSchema } from '../core/index.js';
import type { Frame } from '../frames/index.js';
import type { LearningSession } from '../pipeline/index.js';

const NO_FEATURES: FeatureSchema = { features: [] };

/**
 * Labels held back until the replay reaches the moment each becomes known (its `due`, in rows scored
 * or in the events' time), then handed to the session earliest due first (ties in the order queued).
 * The labels sit in slots of typed arrays that double when full (so the queue allocates only while it
 * grows), ordered by a binary heap of slot numbers; the session reads each one in place through one
 * frame over the slots.
 *
 * @example
 * const queue = new LabelQueue('labels.csv');
 * queue.push(scored + delay, id, label);
 * queue.release(session.scored, session, classes);
 */
export class LabelQueue {
  private readonly source: string;
  private readonly width: number;
  private readonly schema: FeatureSchema;
  private dues = new Float64Array(16);
  private order = new Float64Array(16);
  private labels = new Float64Array(16);
  private values: Float64Array;
  private ids: string[] = new Array<string>(16).fill('');
  private heap = new Int32Array(16);
  private free = new Int32Array(16);
  private size = 0;
  private freeCount = 16;
  private pushed = 0;
  private view: Frame;

  /** `schema`: the events' schema when labels carry their rows' features; none by default. */
  constructor(source: string, schema: FeatureSchema = NO_FEATURES) {
    this.source = source;
    this.width = schema.features.length;
    this.schema = schema;
    this.values = new Float64Array(16 * this.width);
    for (let k = 0; k < 16; k++) this.free[k] = 15 - k;
    this.view = this.frame();
  }

  /** Labels waiting. */
  get length(): number {
    return this.size;
  }

  /** Hold `label` for `id` until `due`; `row` at `offset` holds its features (when the queue keeps them). */
  push(due: number, id: string, label: number, row: Float64Array | null = null, offset = 0): void {
    if (this.freeCount === 0) this.grow();
    const slot = this.free[--this.freeCount]!;
    this.dues[slot] = due;
    this.order[slot] = this.pushed++;
    this.labels[slot] = label;
    this.ids[slot] = id;
    if (this.width > 0 && row !== null) {
      this.values.set(row.subarray(offset, offset + this.width), slot * this.width);
    }
    let at = this.size++;
    const heap = this.heap;
    while (at > 0) {
      const parent = (at - 1) >> 1;
      if (!this.before(slot, heap[parent]!)) break;
      heap[at] = heap[parent]!;
      at = parent;
    }
    heap[at] = slot;
  }

  /**
   * Give the session every label due by `now` (all of them with +∞), earliest due first (on worker
   * threads, the session trains while this thread waits without blocking).
   */
  async release(now: number, session: LearningSession, classes: readonly string[]): Promise<void> {
    for (let slot = this.due(now); slot >= 0; slot = this.due(now)) {
      await session.learnAsync(this.view, classes, slot, slot + 1);
      this.remove(slot);
    }
  }

  /**
   * Hand every label due by `now` to `each`, earliest due first: row `slot` of `frame` (its id, label
   * and features), valid only during the call.
   */
  take(now: number, each: (frame: Frame, slot: number) => void): void {
    for (let slot = this.due(now); slot >= 0; slot = this.due(now)) {
      each(this.view, slot);
      this.remove(slot);
    }
  }

  /** The slot of the earliest label due by `now`, or −1. */
  private due(now: number): number {
    return this.size > 0 && this.dues[this.heap[0]!]! <= now ? this.heap[0]! : -1;
  }

  /** Take the earliest label (in `slot`) off the queue. */
  private remove(slot: number): void {
    this.pop();
    this.free[this.freeCount++] = slot;
  }

  /** Forget every label due by `now` without handing it over (they were joined before a checkpoint). */
  drop(now: number): void {
    while (this.size > 0 && this.dues[this.heap[0]!]! <= now) {
      const slot = this.heap[0]!;
      this.pop();
      this.free[this.freeCount++] = slot;
    }
  }

  private before(a: number, b: number): boolean {
    const da = this.dues[a]!;
    const db = this.dues[b]!;
    return da < db || (da === db && this.order[a]! < this.order[b]!);
  }

  private pop(): void {
    const heap = this.heap;
    const last = heap[--this.size]!;
    let at = 0;
    for (;;) {
      const left = 2 * at + 1;
      if (left >= this.size) break;
      const right = left + 1;
      const child = right < this.size && this.before(heap[right]!, heap[left]!) ? right : left;
      if (!this.before(heap[child]!, last)) break;
      heap[at] = heap[child]!;
      at = child;
    }
    heap[at] = last;
  }

  private grow(): void {
    const cap = this.dues.length;
    const twice = (a: Float64Array): Float64Array<ArrayBuffer> => {
      const b = new Float64Array(a.length * 2);
      b.set(a);
      return b;
    };
    this.dues = twice(this.dues);
    this.order = twice(this.order);
    this.labels = twice(this.labels);
    this.values = twice(this.values);
    this.ids = [...this.ids, ...new Array<string>(cap).fill('')];
    const heap = new Int32Array(cap * 2);
    heap.set(this.heap);
    this.heap = heap;
    this.free = new Int32Array(cap * 2);
    for (let k = 0; k < cap; k++) this.free[k] = 2 * cap - 1 - k;
    this.freeCount = cap;
    this.view = this.frame();
  }

  private frame(): Frame {
    return {
      schema: this.schema,
      rows: this.dues.length,
      width: this.width,
      values: this.values,
      labels: this.labels,
      ids: this.ids,
      origin: { source: this.source, unit: 'row', batch: -1, positions: new Int32Array(0) },
    };
  }
}
