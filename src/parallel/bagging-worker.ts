import { type MessagePort, workerData } from 'node:worker_threads';
import type { FeatureSchema } from '../core/index.js';
import { Bagging, type BaggingSpec } from '../ensembles/index.js';
import { serveShard } from './shard-channel.js';

/**
 * The worker side of `ParallelBagging`: one shard of the ensemble, answering batches over a shared-
 * memory channel until told to stop. This file is a worker's entry point, loaded by URL; nothing
 * imports it.
 */
const { schema, spec, seed, first, port, control } = workerData as {
  schema: FeatureSchema;
  spec: BaggingSpec;
  seed: string;
  first: number;
  port: MessagePort;
  control: Int32Array;
};
serveShard(new Bagging(schema, spec, seed, undefined, undefined, first), port, control);
