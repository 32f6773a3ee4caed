export { BatchVerdicts, ParallelBagging } from './parallel-bagging.js';
