import type { Clock, Timer } from './ports.js';

/**
 * The session's time in a replay: the stream's own time, so that a replay is bit for bit repeatable.
 * The driver moves it on before it scores (`reach`): to the events' time column, read as seconds, or to
 * the row number (one row a second) when there is none. It never goes back (a row earlier than one
 * before it keeps the time reached). Durations and the run's start come from the `Timer` it is given:
 * those are wall-clock metadata only.
 *
 * @example
 * const clock = new EventClock({ monotonic: () => performance.now(), wall: () => Date.now() });
 * clock.reach(rowTime);
 * session.score(frame, classes, r, r + 1);
 */
export class EventClock implements Clock {
  private readonly timer: Timer;
  private ms = 0;

  constructor(timer: Timer) {
    this.timer = timer;
  }

  monotonic(): number {
    return this.timer.monotonic();
  }

  wall(): number {
    return this.timer.wall();
  }

  event(): number {
    return this.ms;
  }

  /** The stream has reached `seconds` of its own time (NaN, or a time before the one reached, is passed over). */
  reach(seconds: number): void {
    const ms = seconds * 1000;
    if (ms > this.ms) this.ms = ms;
  }
}

/**
 * The session's time in live serving: the wall clock (a prediction's age is how long it has waited).
 *
 * @example
 * const clock = liveClock({ monotonic: () => performance.now(), wall: () => Date.now() });
 */
export function liveClock(timer: Timer): Clock {
  return { monotonic: () => timer.monotonic(), wall: () => timer.wall(), event: () => timer.wall() };
}
