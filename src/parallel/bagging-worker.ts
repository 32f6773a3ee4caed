import { type MessagePort, workerData } from 'node:worker_threads';
import type { FeatureSchema } from '../core/index.js';
import { Bagging, type BaggingSpec, type EnsembleSnapshot } from '../ensembles/index.js';
import type { LifecycleChange } from '../journal/index.js';
import { serveShard } from './shard-channel.js';
import { ShardLedger } from './shard-ledger.js';

/**
 * The worker side of `ParallelBagging`: one shard of the ensemble (seats `first` …, built fresh or from
 * its part of a snapshot), answering requests over a shared-memory channel until told to stop. This
 * file is a worker's entry point, loaded by URL; nothing imports it.
 */
const { schema, spec, seed, first, shard, shards, restored, port, control, status, tally } = workerData as {
  schema: FeatureSchema;
  spec: BaggingSpec & { lifecycle: { replacementWindow: number; maxReplacements: number } };
  seed: string;
  first: number;
  shard: number;
  shards: number;
  restored: EnsembleSnapshot;
  port: MessagePort;
  control: Int32Array;
  status: Float64Array[];
  tally: Int32Array;
};
const ledger = new ShardLedger(
  shard,
  shards,
  spec.lifecycle.replacementWindow,
  spec.lifecycle.maxReplacements,
  restored.lifecycle,
);
const changes: LifecycleChange[] = [];
const steps: number[] = [];
const bagging = new Bagging(
  schema,
  spec,
  seed,
  (change) => {
    changes.push(change);
    steps.push(ledger.step);
  },
  restored,
  first,
  ledger,
);
serveShard(bagging, ledger, changes, steps, port, control, status, tally);
