import { setTimeout as sleep } from 'node:timers/promises';

/** Slices per second when pacing: a paced replay moves forward ten times a second. */
const STEPS_PER_SECOND = 10;

/**
 * Replays a recorded stream no faster than `rowsPerSecond`, as a live stream would arrive: each frame
 * is scored in ranges of a tenth of a second's rows, and `wait` holds the run back until the clock has
 * caught up with the rows done. Without a rate, a frame is one range and nothing waits.
 *
 * @example
 * const pacer = new Pacer(2000, () => performance.now());
 * for (const [from, to] of pacer.ranges(frame.rows)) {
 *   session.score(frame, classes, from, to);
 *   await pacer.wait(to - from);
 * }
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

  /** Row ranges [from, to) that cover rows 0 … rows − 1 in order. */
  *ranges(rows: number): Generator<readonly [number, number]> {
    const step = this.rate === undefined ? rows : Math.max(1, Math.round(this.rate / STEPS_PER_SECOND));
    for (let from = 0; from < rows; from += step) yield [from, Math.min(rows, from + step)];
  }

  /** Count `rows` as done and wait until the rate allows the next ones. */
  async wait(rows: number): Promise<void> {
    if (this.rate === undefined) return;
    if (Number.isNaN(this.started)) this.started = this.now();
    this.done += rows;
    const ahead = this.started + (this.done / this.rate) * 1000 - this.now();
    if (ahead > 0) await sleep(ahead);
  }
}
