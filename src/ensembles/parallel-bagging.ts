import { Worker } from 'node:worker_threads';
import { type FeatureSchema, integerAtLeast, type Seed, ShoalError } from '../core/index.js';
import { Bagging, type BaggingSpec } from './bagging.js';
import { Verdict } from './verdict.js';
import { combineVotes } from './vote.js';

/**
 * Online bagging with its members split over threads. Members of online bagging are independent —
 * each has its own learner and its own Poisson generator — so seats `0 … k−1` can run in this thread
 * and the rest in worker threads, and the votes come out exactly as in one thread for the same seed.
 *
 * Work moves in batches of rows (a frame), not rows: each thread scores and trains its seats on the
 * whole batch, then the votes are combined row by row here. The member lifecycle couples seats (the
 * replacement cap, member ids), so this form runs with the lifecycle switched off; the classes of a
 * batch are announced before it is scored.
 *
 * @example
 * const bag = await ParallelBagging.start(schema, { members: 10, lambda: 1, lifecycle: { enabled: false } }, 7, 2);
 * await bag.scoreTrainBatch(frame.values, frame.labels, frame.rows, verdicts);
 * await bag.close();
 */
export class BatchVerdicts {
  classes = 0;
  probabilities = new Float64Array(0);
  predicted = new Int32Array(0);
  agreement = new Float64Array(0);
  voters = new Int32Array(0);

  fit(rows: number, classes: number): void {
    this.classes = classes;
    if (this.predicted.length < rows || this.probabilities.length < rows * classes) {
      this.probabilities = new Float64Array(rows * classes);
      this.predicted = new Int32Array(rows);
      this.agreement = new Float64Array(rows);
      this.voters = new Int32Array(rows);
    }
  }
}

/** One shard's answers on a batch: for every row, every local member's probabilities, class and weight. */
export interface ShardResult {
  readonly classes: number;
  readonly probs: Float64Array<ArrayBuffer>;
  readonly preds: Int32Array<ArrayBuffer>;
  readonly weights: Float64Array<ArrayBuffer>;
}

/** A request to a shard: train (labels given) or score a batch of rows. */
export interface ShardRequest {
  readonly values: Float64Array;
  readonly labels: Float64Array | null;
  readonly rows: number;
  readonly classes: number;
}

/** Run a batch through a shard and collect its members' answers row by row. */
export function runShard(shard: Bagging, request: ShardRequest): ShardResult {
  const { values, labels, rows } = request;
  const width = shard.schema.features.length;
  shard.ensureClasses(request.classes);
  const members = shard.options.members;
  const classes = shard.classes;
  const probs = new Float64Array(rows * members * classes);
  const preds = new Int32Array(rows * members);
  const weights = new Float64Array(rows * members);
  const verdict = new Verdict();
  for (let r = 0; r < rows; r++) {
    if (labels === null) shard.score(values, r * width, verdict);
    else shard.train(values, r * width, labels[r]!);
    const m = shard.members;
    const at = r * members;
    for (let i = 0; i < members; i++) {
      preds[at + i] = m.preds[i]!;
      weights[at + i] = m.weights[i]!;
    }
    const span = members * classes;
    for (let i = 0; i < span; i++) probs[at * classes + i] = m.probs[i]!;
  }
  return { classes, probs, preds, weights };
}

interface Pending {
  resolve(result: ShardResult): void;
  reject(error: Error): void;
}

class RemoteShard {
  readonly worker: Worker;
  private pending: Pending | null = null;

  constructor(worker: Worker) {
    this.worker = worker;
    worker.on('message', (result: ShardResult) => {
      const p = this.pending;
      this.pending = null;
      p?.resolve(result);
    });
    worker.on('error', (e) => {
      const p = this.pending;
      this.pending = null;
      p?.reject(e);
    });
  }

  run(request: ShardRequest): Promise<ShardResult> {
    return new Promise((resolve, reject) => {
      this.pending = { resolve, reject };
      this.worker.postMessage(request);
    });
  }
}

export class ParallelBagging {
  readonly members: number;
  private readonly local: Bagging;
  private readonly remote: RemoteShard[];
  /** Seats held by each shard, local first. */
  private readonly counts: number[];
  private readonly verdict = new Verdict();
  private probs = new Float64Array(0);
  private readonly preds: Int32Array;
  private readonly weights: Float64Array;
  private readonly hard: boolean;

  private constructor(local: Bagging, remote: RemoteShard[], counts: number[]) {
    this.local = local;
    this.remote = remote;
    this.counts = counts;
    this.members = counts.reduce((a, b) => a + b, 0);
    this.preds = new Int32Array(this.members);
    this.weights = new Float64Array(this.members);
    this.hard = local.options.vote === 'hard';
  }

  /** Start `threads` shards (this thread counts as one) of a bagging ensemble. */
  static async start(
    schema: FeatureSchema,
    spec: BaggingSpec,
    seed: Seed,
    threads: number,
  ): Promise<ParallelBagging> {
    const whole = new Bagging(schema, spec, seed);
    if (whole.options.lifecycle.enabled) {
      throw new ShoalError(
        'invalid-parameter',
        'parallel bagging: the member lifecycle couples seats (replacement cap, member ids); set lifecycle.enabled to false',
      );
    }
    const members = whole.options.members;
    integerAtLeast('parallel bagging', 'threads', threads, 1);
    const shards = Math.min(threads, members);
    const counts = Array.from(
      { length: shards },
      (_, i) => Math.floor(((i + 1) * members) / shards) - Math.floor((i * members) / shards),
    );
    const firsts = counts.map((_, i) => counts.slice(0, i).reduce((a, b) => a + b, 0));
    const shardSpec = (i: number): BaggingSpec => ({ ...whole.options, members: counts[i]! });
    const local = new Bagging(schema, shardSpec(0), seed, undefined, undefined, 0);
    const remote = await Promise.all(
      counts.slice(1).map(async (_, j) => {
        const i = j + 1;
        const worker = new Worker(new URL('./bagging-worker.js', import.meta.url), {
          workerData: { schema, spec: shardSpec(i), seed: String(seed), first: firsts[i] },
        });
        await new Promise<void>((resolve, reject) => {
          worker.once('online', resolve);
          worker.once('error', reject);
        });
        return new RemoteShard(worker);
      }),
    );
    return new ParallelBagging(local, remote, counts);
  }

  /** Score every row of a batch, then train on it (the prequential step), row by row. */
  scoreTrainBatch(
    values: Float64Array,
    labels: ArrayLike<number>,
    rows: number,
    out: BatchVerdicts,
  ): Promise<void> {
    let classes = this.local.classes;
    for (let r = 0; r < rows; r++) if (labels[r]! + 1 > classes) classes = labels[r]! + 1;
    return this.run(
      { values, labels: Float64Array.from({ length: rows }, (_, r) => labels[r]!), rows, classes },
      out,
    );
  }

  /** Score every row of a batch. */
  scoreBatch(values: Float64Array, rows: number, out: BatchVerdicts): Promise<void> {
    return this.run({ values, labels: null, rows, classes: this.local.classes }, out);
  }

  async close(): Promise<void> {
    await Promise.all(this.remote.map((r) => r.worker.terminate()));
  }

  private async run(request: ShardRequest, out: BatchVerdicts): Promise<void> {
    const width = this.local.schema.features.length;
    // A copy of just this batch: posting a view would clone the whole buffer behind it.
    const slice: ShardRequest = { ...request, values: request.values.slice(0, request.rows * width) };
    const remote = this.remote.map((r) => r.run(slice));
    const results = [runShard(this.local, slice), ...(await Promise.all(remote))];
    const classes = results[0]!.classes;
    const { rows } = request;
    out.fit(rows, classes);
    if (this.probs.length !== this.members * classes) this.probs = new Float64Array(this.members * classes);
    const { probs, preds, weights, verdict } = this;
    for (let r = 0; r < rows; r++) {
      let seat = 0;
      for (let s = 0; s < results.length; s++) {
        const result = results[s]!;
        const n = this.counts[s]!;
        const from = r * n;
        for (let m = 0; m < n; m++) {
          preds[seat + m] = result.preds[from + m]!;
          weights[seat + m] = result.weights[from + m]!;
        }
        const width = n * classes;
        const at = from * classes;
        const to = seat * classes;
        for (let i = 0; i < width; i++) probs[to + i] = result.probs[at + i]!;
        seat += n;
      }
      combineVotes(this.hard, probs, preds, weights, this.members, classes, verdict);
      out.probabilities.set(verdict.probabilities.subarray(0, classes), r * classes);
      out.predicted[r] = verdict.predicted;
      out.agreement[r] = verdict.agreement;
      out.voters[r] = verdict.voters;
    }
  }
}
