import { ParallelBagging, type ShardPool } from '../parallel/index.js';
import type { EnsembleThreads } from '../pipeline/index.js';

/**
 * The session's way onto worker threads (`ensemble.threads` > 1): a bagging split over workers, taken
 * from `pool` when there is one (see `ShardPool`), else started for the session and ended with it.
 */
export function threadsFrom(pool: ShardPool | null): EnsembleThreads {
  return (snapshot, threads) => ParallelBagging.restore(snapshot, threads, pool);
}
