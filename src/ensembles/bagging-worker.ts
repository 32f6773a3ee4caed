import { parentPort, workerData } from 'node:worker_threads';
import type { FeatureSchema } from '../core/index.js';
import { Bagging, type BaggingSpec } from './bagging.js';
import { runShard, type ShardRequest } from './parallel-bagging.js';

/**
 * The worker side of `ParallelBagging`: one shard of the ensemble, answering batches. This file is a
 * worker's entry point, loaded by URL; nothing imports it.
 */
const { schema, spec, seed, first } = workerData as {
  schema: FeatureSchema;
  spec: BaggingSpec;
  seed: string;
  first: number;
};
const shard = new Bagging(schema, spec, seed, undefined, undefined, first);

parentPort!.on('message', (request: ShardRequest) => {
  const result = runShard(shard, request);
  parentPort!.postMessage(result, [result.probs.buffer, result.preds.buffer, result.weights.buffer]);
});
