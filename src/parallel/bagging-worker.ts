import { type MessagePort, parentPort } from 'node:worker_threads';
import type { FeatureSchema } from '../core/index.js';
import { Bagging, type BaggingSpec, type EnsembleSnapshot } from '../ensembles/index.js';
import type { LifecycleChange } from '../journal/index.js';
import { serveShard } from './shard-channel.js';
import { ShardLedger } from './shard-ledger.js';

/** A shard for a worker to host: seats `first` … of the ensemble in `restored`, and its channel. */
export interface ShardHost {
  readonly schema: FeatureSchema;
  readonly spec: BaggingSpec & { lifecycle: { replacementWindow: number; maxReplacements: number } };
  readonly seed: string;
  readonly first: number;
  readonly shard: number;
  readonly shards: number;
  /** Seats of the whole ensemble. */
  readonly seats: number;
  readonly restored: EnsembleSnapshot;
  readonly port: MessagePort;
  readonly control: Int32Array;
  readonly status: Float64Array[];
  readonly tally: Int32Array;
}

/**
 * The worker side of `ParallelBagging`: a thread that hosts one shard of an ensemble at a time (built
 * from its part of a snapshot), answering requests over a shared-memory channel until told to stop,
 * then waits for the next shard (see `ShardPool`). This file is a worker's entry point, loaded by URL;
 * only its types are imported.
 */
function host(h: ShardHost): void {
  const { schema, spec, seed, first, shard, shards, restored } = h;
  const ledger = new ShardLedger(
    shard,
    shards,
    h.seats,
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
  serveShard(bagging, ledger, changes, steps, h.port, h.control, h.status, h.tally);
}

parentPort!.on('message', host);
