export { ParallelBagging } from './parallel-bagging.js';
export { ShardPool } from './shard-pool.js';
