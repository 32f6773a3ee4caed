import { setTimeout as sleep } from 'node:timers/promises';
import type { RowBatch } from '../pipeline/index.js';

/** Slices per second when pacing: a paced replay moves forward ten times a second. */
const STEPS_PER_SECOND = 10;

/**
 * Replays a recorded stream no faster than `rowsPerSecond`, as a live stream would arrive: each frame
 * is cut into slices of a tenth of a second's rows (views into the frame, no copies of rows), and
 * `wait` holds the run back until the clock has caught up with the rows done. Without a rate, frames
 * pass whole and nothing waits.
 *
 * @example
 * const pacer = new Pacer(2000, () => performance.now());
 * for (const slice of pacer.slices(frame)) { loop.prequential(slice, classes); await pacer.wait(slice.rows); }
 */
export class Pacer {
  private readonly rate: number | undefined;
  private readonly now: () => number;
  private started = Number.NaN;
  private done = 0;

  constructor(rowsPerSecond: number | undefined, now: () => number) {
    this.rate = rowsPerSecond;
    this.now = now;
  }

  *slices(frame: RowBatch): Generator<RowBatch> {
    const rate = this.rate;
    if (rate === undefined || frame.rows === 0) {
      yield frame;
      return;
    }
    const step = Math.max(1, Math.round(rate / STEPS_PER_SECOND));
    const { width, values, labels } = frame;
    for (let start = 0; start < frame.rows; start += step) {
      const rows = Math.min(step, frame.rows - start);
      yield {
        schema: frame.schema,
        rows,
        width,
        values: values.subarray(start * width, (start + rows) * width),
        labels: labels === null ? null : labels.subarray(start, start + rows),
      };
    }
  }

  /** Count `rows` as done and wait until the rate allows the next ones. */
  async wait(rows: number): Promise<void> {
    if (this.rate === undefined) return;
    if (Number.isNaN(this.started)) this.started = this.now();
    this.done += rows;
    const due = this.started + (this.done / this.rate) * 1000;
    const ahead = due - this.now();
    if (ahead > 0) await sleep(ahead);
  }
}
