import { MessageChannel, Worker } from 'node:worker_threads';
import { type FeatureSchema, integerAtLeast, type Seed, ShoalError } from '../core/index.js';
import { Bagging, type BaggingSpec, combineVotes, Verdict } from '../ensembles/index.js';
import { channelControl, runShard, ShardAnswers, ShardClient, shardReady } from './shard-channel.js';

/**
 * Online bagging with its members split over threads. Members of online bagging are independent —
 * each has its own learner and its own Poisson generator — so seats `0 … k−1` can run in this thread
 * and the rest in worker threads, and the votes come out exactly as in one thread for the same seed.
 *
 * Work moves in batches of rows (a frame), not rows: each thread scores and trains its seats on the
 * whole batch, then the votes are combined row by row here. Rows and answers cross threads in shared
 * memory (see `shard-channel.ts`), so a batch costs no copies; while this thread waits for the other
 * shards it never blocks (`Atomics.waitAsync`), so its event loop keeps serving.
 * The member lifecycle couples seats (the replacement cap, member ids), so this form runs with the
 * lifecycle switched off; the classes of a batch are announced before it is scored.
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

/** A worker thread holding one shard, and the channel to it. */
interface RemoteShard {
  readonly worker: Worker;
  readonly client: ShardClient;
  readonly answers: ShardAnswers;
  /** Why the worker stopped, once it has (noticed between batches). */
  lost: string | null;
}

export class ParallelBagging {
  readonly members: number;
  private readonly local: Bagging;
  private readonly localAnswers = new ShardAnswers(false);
  private readonly remote: RemoteShard[];
  /** Seats held by each shard, local first. */
  private readonly counts: number[];
  private readonly verdict = new Verdict();
  private probs = new Float64Array(0);
  private readonly preds: Int32Array;
  private readonly weights: Float64Array;
  private readonly confidence: Float64Array;
  private readonly hard: boolean;
  /** The batch in shared memory, grown as needed. */
  private values = new Float64Array(new SharedArrayBuffer(0));
  private labels = new Float64Array(new SharedArrayBuffer(0));
  /** A batch is out: its buffers are in use until its answers are in. */
  private busy = false;

  private constructor(local: Bagging, remote: RemoteShard[], counts: number[]) {
    this.local = local;
    this.remote = remote;
    this.counts = counts;
    this.members = counts.reduce((a, b) => a + b, 0);
    this.preds = new Int32Array(this.members);
    this.weights = new Float64Array(this.members);
    this.confidence = new Float64Array(this.members);
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
      counts.slice(1).map(async (_, j): Promise<RemoteShard> => {
        const i = j + 1;
        const { port1, port2 } = new MessageChannel();
        const control = channelControl();
        // Started from a string that imports the entry file: a worker started from a file refuses the
        // caller's --input-type (set by `node --input-type=module -e …`), which it inherits.
        const entry = JSON.stringify(new URL('./bagging-worker.js', import.meta.url).href);
        const worker = new Worker(`import(${entry})`, {
          eval: true,
          workerData: {
            schema,
            spec: shardSpec(i),
            seed: String(seed),
            first: firsts[i],
            port: port2,
            control,
          },
          transferList: [port2],
        });
        const shard: RemoteShard = {
          worker,
          client: new ShardClient(port1, control),
          answers: new ShardAnswers(true),
          lost: null,
        };
        await new Promise<void>((resolve, reject) => {
          const failed = (e: unknown) =>
            reject(
              new ShoalError('worker-failure', `parallel bagging: a worker did not start: ${reason(e)}`),
            );
          const exited = (code: number) => failed(`exited with code ${code}`);
          worker.once('error', failed);
          worker.once('exit', exited);
          shardReady(control).then(() => {
            worker.off('error', failed);
            worker.off('exit', exited);
            resolve();
          }, failed);
        });
        worker.on('error', (e) => {
          shard.lost ??= reason(e);
        });
        worker.on('exit', (code) => {
          shard.lost ??= `exited with code ${code}`;
        });
        // An idle worker need not keep the process alive; while a batch is out, `run` refs it, since a
        // pending Atomics.waitAsync does not.
        worker.unref();
        port1.unref();
        return shard;
      }),
    );
    return new ParallelBagging(local, remote, counts);
  }

  /** Score every row of a batch, then train on it (the prequential step), row by row. */
  async scoreTrainBatch(
    values: Float64Array,
    labels: ArrayLike<number>,
    rows: number,
    out: BatchVerdicts,
  ): Promise<void> {
    if (labels.length < rows) {
      throw new ShoalError(
        'invalid-label',
        `parallel bagging: a batch of ${rows} rows needs ${rows} labels, got ${labels.length}`,
      );
    }
    let classes = this.local.classes;
    for (let r = 0; r < rows; r++) if (labels[r]! + 1 > classes) classes = labels[r]! + 1;
    if (this.labels.length < rows) this.labels = new Float64Array(new SharedArrayBuffer(8 * rows));
    for (let r = 0; r < rows; r++) this.labels[r] = labels[r]!;
    await this.run(values, this.labels, rows, classes, out);
  }

  /** Score every row of a batch. */
  async scoreBatch(values: Float64Array, rows: number, out: BatchVerdicts): Promise<void> {
    await this.run(values, null, rows, this.local.classes, out);
  }

  /** Stop the workers. */
  async close(): Promise<void> {
    for (const r of this.remote) r.client.stop();
    await Promise.all(this.remote.map((r) => r.worker.terminate()));
  }

  private async run(
    values: Float64Array,
    labels: Float64Array | null,
    rows: number,
    classes: number,
    out: BatchVerdicts,
  ): Promise<void> {
    if (this.busy) {
      throw new ShoalError(
        'invalid-parameter',
        'parallel bagging: a batch is still out; await it before sending the next',
      );
    }
    for (const r of this.remote) {
      if (r.lost !== null) {
        throw new ShoalError('worker-failure', `parallel bagging: a worker stopped: ${r.lost}`);
      }
    }
    const width = this.local.schema.features.length;
    if (!(Number.isInteger(rows) && rows >= 0 && values.length >= rows * width)) {
      throw new ShoalError(
        'invalid-row',
        `parallel bagging: a batch of ${rows} rows needs ${rows * width} values, the buffer holds ${values.length}`,
      );
    }
    if (this.values.length < rows * width)
      this.values = new Float64Array(new SharedArrayBuffer(8 * rows * width));
    this.values.set(values.subarray(0, rows * width));
    this.busy = true;
    try {
      await this.exchange(labels, rows, classes, out);
    } finally {
      this.busy = false;
    }
  }

  /** Send the batch in shared memory to every shard, run the local one, collect and combine the votes. */
  private async exchange(
    labels: Float64Array | null,
    rows: number,
    classes: number,
    out: BatchVerdicts,
  ): Promise<void> {
    const c = Math.max(classes, this.local.classes);
    this.remote.forEach((r, j) => {
      r.worker.ref();
      r.answers.fit(rows, this.counts[j + 1]!, c);
      r.client.post({
        stop: false,
        rows,
        classes,
        values: this.values.buffer,
        labels: labels === null ? null : labels.buffer,
        probs: r.answers.probs.buffer,
        preds: r.answers.preds.buffer,
        weights: r.answers.weights.buffer,
      });
    });
    this.localAnswers.fit(rows, this.counts[0]!, c);
    // Every shard gets to the end of the batch, or to the same bad row, before an error is raised.
    let failure: unknown = null;
    try {
      runShard(this.local, this.values, labels, rows, classes, this.localAnswers, null);
    } catch (e) {
      failure = e;
    }
    for (const r of this.remote) {
      try {
        await r.client.collect();
      } catch (e) {
        failure ??= e;
      } finally {
        r.worker.unref();
      }
    }
    if (failure !== null) throw failure;
    const answers = [this.localAnswers, ...this.remote.map((r) => r.answers)];
    out.fit(rows, c);
    if (this.probs.length !== this.members * c) this.probs = new Float64Array(this.members * c);
    const { probs, preds, weights, confidence, verdict } = this;
    for (let r = 0; r < rows; r++) {
      let seat = 0;
      for (let s = 0; s < answers.length; s++) {
        const shard = answers[s]!;
        const n = this.counts[s]!;
        const from = r * n;
        for (let m = 0; m < n; m++) {
          preds[seat + m] = shard.preds[from + m]!;
          weights[seat + m] = shard.weights[2 * (from + m)]!;
          confidence[seat + m] = shard.weights[2 * (from + m) + 1]!;
        }
        const span = n * c;
        for (let i = 0, at = from * c, to = seat * c; i < span; i++) probs[to + i] = shard.probs[at + i]!;
        seat += n;
      }
      combineVotes(this.hard, probs, preds, weights, confidence, this.members, c, verdict);
      for (let k = 0; k < c; k++) out.probabilities[r * c + k] = verdict.probabilities[k]!;
      out.predicted[r] = verdict.predicted;
      out.agreement[r] = verdict.agreement;
      out.voters[r] = verdict.voters;
    }
  }
}

function reason(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}
