import { ParallelBagging } from '../parallel/index.js';
import type { EnsembleThreads } from '../pipeline/index.js';

/** The session's way onto worker threads (`ensemble.threads` > 1): a bagging split over workers. */
export const onThreads: EnsembleThreads = (snapshot, threads) => ParallelBagging.restore(snapshot, threads);
