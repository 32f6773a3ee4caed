import { decodeF64, encodeF64, ShoalError } from '../core/index.js';
import type { Frame } from '../frames/index.js';

/** What became of a label offered to `EarlyLabels.hold`. */
export const HELD = 0;
/** Held, and the oldest label held was pushed out to make room (the count bound). */
export const HELD_PUSHED_OUT = 1;
/** Not held: a label for the same id is already waiting (the first one stays). */
export const ALREADY_HELD = 2;
export type HoldOutcome = typeof HELD | typeof HELD_PUSHED_OUT | typeof ALREADY_HELD;

/**
 * Labels that came before their events. Two topics (or a labels file and an events file) are not read
 * in step, so a label can reach the session before the event it belongs to has been scored: it finds no
 * prediction, and its id was never seen. Such a label waits here, under its id, until the event comes —
 * then the session joins it exactly as if it had come right after the batch that scored the event — or
 * until it leaves unjoined:
 * - count: at most `capacity` labels wait; holding one more pushes the oldest out;
 * - time: `expire(cutoff)` drops every label held before `cutoff` (the session's time: the stream's own
 *   time in a replay, the wall clock when live), oldest first.
 * A label that leaves unjoined is the session's to count (as unknown: its event never came in time).
 *
 * When the session scores a row whose id has a label waiting, `claim` moves the label to the labels
 * ready to join; `ready()` gives them, in the order claimed, as one labels frame for `learn`, and
 * `clearReady()` empties that list. The labels wait in a map in the order they came (oldest first), so
 * a snapshot and its restore keep that order, and with it which label the count bound pushes out next.
 *
 * @example
 * const early = new EarlyLabels(10_000);
 * early.hold('leg-17', 1, clock.event());   // the label came first
 * early.claim('leg-17');                    // its event was just scored
 * session.learn(early.ready()!, classes); early.clearReady();
 */
export class EarlyLabels {
  readonly capacity: number;
  private readonly waiting = new Map<string, { readonly label: number; readonly time: number }>();
  private readonly readyIds: string[] = [];
  private readyLabels = new Float64Array(16);

  constructor(capacity: number) {
    if (!(Number.isInteger(capacity) && capacity >= 0)) {
      throw new ShoalError(
        'invalid-parameter',
        `early labels: capacity must be an integer ≥ 0, got ${capacity}`,
      );
    }
    this.capacity = capacity;
  }

  /** Labels waiting for their event now. */
  get size(): number {
    return this.waiting.size;
  }

  /** Hold `label` for `id` from `time` on (capacity 0 holds nothing: call only when it is above 0). */
  hold(id: string, label: number, time: number): HoldOutcome {
    if (this.waiting.has(id)) return ALREADY_HELD;
    let outcome: HoldOutcome = HELD;
    if (this.waiting.size >= this.capacity) {
      this.waiting.delete(this.waiting.keys().next().value!);
      outcome = HELD_PUSHED_OUT;
    }
    this.waiting.set(id, { label, time });
    return outcome;
  }

  /** The event of `id` was scored: its label, when one waits, is ready to join (true), else false. */
  claim(id: string): boolean {
    const held = this.waiting.get(id);
    if (held === undefined) return false;
    this.waiting.delete(id);
    const n = this.readyIds.length;
    if (n === this.readyLabels.length) {
      const wider = new Float64Array(2 * n);
      wider.set(this.readyLabels);
      this.readyLabels = wider;
    }
    this.readyIds.push(id);
    this.readyLabels[n] = held.label;
    return true;
  }

  /** Drop the label waiting for `id`, if any (its event came with a label of its own); true if one was. */
  drop(id: string): boolean {
    return this.waiting.delete(id);
  }

  /** The labels claimed since `clearReady`, as a labels frame (ids and labels, no features), or null. */
  ready(): Frame | null {
    const rows = this.readyIds.length;
    if (rows === 0) return null;
    return {
      schema: { features: [] },
      rows,
      width: 0,
      values: new Float64Array(0),
      labels: this.readyLabels,
      ids: this.readyIds,
      origin: {
        source: 'labels held for their events',
        unit: 'row',
        batch: -1,
        positions: new Int32Array(rows),
      },
    };
  }

  clearReady(): void {
    this.readyIds.length = 0;
  }

  /** Drop every label held before `cutoff`, oldest first; returns how many left. */
  expire(cutoff: number): number {
    let expired = 0;
    for (const [id, held] of this.waiting) {
      if (!(held.time < cutoff)) break;
      this.waiting.delete(id);
      expired++;
    }
    return expired;
  }

  /** The labels waiting, oldest first, JSON-safe and exact (label codes and times as base64 doubles). */
  snapshot(): EarlyLabelsSnapshot {
    const ids = [...this.waiting.keys()];
    const labels = new Float64Array(ids.length);
    const times = new Float64Array(ids.length);
    let k = 0;
    for (const held of this.waiting.values()) {
      labels[k] = held.label;
      times[k++] = held.time;
    }
    return { capacity: this.capacity, ids, labels: encodeF64(labels), times: encodeF64(times) };
  }

  static restore(s: EarlyLabelsSnapshot): EarlyLabels {
    const what = 'early labels snapshot';
    const bad = (why: string): never => {
      throw new ShoalError('invalid-snapshot', `${what}: ${why}`);
    };
    if (!(s !== null && typeof s === 'object')) bad('expected a mapping');
    if (!(Number.isInteger(s.capacity) && s.capacity >= 0 && s.capacity < 2 ** 31))
      bad(`capacity must be a whole number, got ${String(s.capacity)}`);
    if (!(Array.isArray(s.ids) && s.ids.every((id) => typeof id === 'string')))
      bad('ids must be a list of strings');
    if (s.ids.length > s.capacity) bad(`${s.ids.length} labels held, above the capacity ${s.capacity}`);
    const labels = decodeF64(s.labels, `${what} labels`);
    const times = decodeF64(s.times, `${what} times`);
    if (labels.length !== s.ids.length || times.length !== s.ids.length)
      bad(`${s.ids.length} ids, but ${labels.length} labels and ${times.length} times`);
    const early = new EarlyLabels(s.capacity);
    s.ids.forEach((id, k) => {
      if (early.waiting.has(id)) bad(`id ${JSON.stringify(id)} is held twice`);
      early.waiting.set(id, { label: labels[k]!, time: times[k]! });
    });
    return early;
  }
}

export interface EarlyLabelsSnapshot {
  readonly capacity: number;
  /** The ids of the labels waiting, oldest first, with each one's label code and time (base64 doubles). */
  readonly ids: readonly string[];
  readonly labels: string;
  readonly times: string;
}
