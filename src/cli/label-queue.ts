import type { FeatureSchema } from '../core/index.js';
import type { Frame } from '../frames/index.js';
import type { LearningSession } from '../pipeline/index.js';

const NO_FEATURES: FeatureSchema = { features: [] };

/**
 * Labels held back until the replay reaches the row count at which each becomes known (its `due`:
 * rows scored), then handed to the session in the order they were queued. Dues never decrease. The
 * queue is a ring of typed arrays that doubles when full (so it allocates only while it grows), and it
 * is exposed to the session as one frame over the ring: `learn` reads a contiguous range of it.
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
  private labels = new Float64Array(16);
  private values: Float64Array;
  private ids: string[] = new Array<string>(16).fill('');
  private head = 0;
  private size = 0;
  private view: Frame;

  /** `schema`: the events' schema when labels carry their rows' features; none by default. */
  constructor(source: string, schema: FeatureSchema = NO_FEATURES) {
    this.source = source;
    this.width = schema.features.length;
    this.schema = schema;
    this.values = new Float64Array(16 * this.width);
    this.view = this.frame();
  }

  /** Labels waiting. */
  get length(): number {
    return this.size;
  }

  /** The due of the oldest label waiting, or +∞ when none waits. */
  nextDue(): number {
    return this.size === 0 ? Number.POSITIVE_INFINITY : this.dues[this.head]!;
  }

  /** Hold `label` for `id` until `due` rows were scored; `row` at `offset` holds its features (width > 0). */
  push(due: number, id: string, label: number, row: Float64Array | null = null, offset = 0): void {
    if (this.size === this.dues.length) this.grow();
    const cap = this.dues.length;
    const at = (this.head + this.size) % cap;
    this.dues[at] = due;
    this.labels[at] = label;
    this.ids[at] = id;
    if (this.width > 0 && row !== null) {
      this.values.set(row.subarray(offset, offset + this.width), at * this.width);
    }
    this.size++;
  }

  /** Give the session every label due by `scored` rows (all of them with +∞), oldest first. */
  release(scored: number, session: LearningSession, classes: readonly string[]): void {
    while (this.size > 0 && this.dues[this.head]! <= scored) {
      const cap = this.dues.length;
      let end = this.head;
      let n = 0;
      while (n < this.size && end < cap && this.dues[end]! <= scored) {
        end++;
        n++;
      }
      session.learn(this.view, classes, this.head, end);
      this.head = end === cap ? 0 : end;
      this.size -= n;
    }
  }

  private grow(): void {
    const cap = this.dues.length;
    const dues = new Float64Array(cap * 2);
    const labels = new Float64Array(cap * 2);
    const values = new Float64Array(cap * 2 * this.width);
    const ids = new Array<string>(cap * 2).fill('');
    for (let k = 0; k < this.size; k++) {
      const from = (this.head + k) % cap;
      dues[k] = this.dues[from]!;
      labels[k] = this.labels[from]!;
      ids[k] = this.ids[from]!;
      if (this.width > 0) {
        values.set(this.values.subarray(from * this.width, (from + 1) * this.width), k * this.width);
      }
    }
    this.dues = dues;
    this.labels = labels;
    this.values = values;
    this.ids = ids;
    this.head = 0;
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
