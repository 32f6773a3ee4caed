export { ParallelBagging } from './parallel-bagging.js';
