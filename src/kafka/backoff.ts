import type { Logger } from 'pino';

/**
 * Waiting for a broker that went away. kafkajs retries a request a few times and then gives up — a
 * refused connection of the producer is not retried at all — so the service retries whole operations
 * itself, with capped exponential backoff (200 ms doubling to 5 s), for as long as it runs.
 */
export function backoffMs(attempt: number): number {
  return Math.min(5_000, 100 * 2 ** Math.min(attempt, 6));
}

export interface PersistOptions {
  readonly log: Logger;
  /** True once the service stops: no more attempts. */
  readonly stopped: () => boolean;
  /** Called after each failed attempt, before the backoff. */
  readonly waiting?: (attempt: number) => Promise<void>;
}

/**
 * Run `work` until it succeeds; true once it did, false when the service stopped first. The first
 * failure is logged as a warning, later ones at debug level (a broker away for minutes must not flood
 * the log); success after failures at info.
 *
 * @example
 * await persist('connect the producer', () => producer.connect(), { log, stopped: () => false });
 */
export async function persist(
  what: string,
  work: () => Promise<void>,
  options: PersistOptions,
): Promise<boolean> {
  for (let attempt = 1; ; attempt++) {
    try {
      await work();
      if (attempt > 1) options.log.info({ attempts: attempt }, `${what}: done after retries`);
      return true;
    } catch (e) {
      if (options.stopped()) return false;
      const delay = backoffMs(attempt);
      options.log[attempt === 1 ? 'warn' : 'debug'](
        { attempt, retryInMs: delay, error: (e as Error).message },
        `cannot ${what}; retrying`,
      );
      await options.waiting?.(attempt);
      await new Promise((done) => setTimeout(done, delay));
      if (options.stopped()) return false;
    }
  }
}
