import { MessageChannel } from 'node:worker_threads';
import { type FeatureSchema, integerAtLeast, type Seed, ShoalError } from '../core/index.js';
import {
  Bagging,
  type BaggingOptions,
  type BaggingSpec,
  type BatchVerdicts,
  type EnsembleSnapshot,
  type LifecycleSink,
  type LifecycleSnapshot,
  type SeatView,
} from '../ensembles/index.js';
import { MAX_CLASSES } from '../learners/index.js';
import type { ShardHost } from './bagging-worker.js';
import {
  allAnswered,
  answerTally,
  type BatchBuffers,
  channelControl,
  ShardAnswers,
  ShardClient,
  type ShardReply,
  type ShardRequest,
  SLOTS,
  sameBuffers,
  shardReady,
  shardStatus,
  statusCounts,
  statusSeats,
} from './shard-channel.js';
import { LedgerHost, LedgerWords } from './shard-ledger.js';
import { type ShardPool, type ShardThread, startThread } from './shard-pool.js';
import { SharedVerdicts } from './shard-votes.js';

/**
 * Online bagging with its members split over worker threads, member lifecycle and all. Members of
 * online bagging are independent — each has its own learner and its own Poisson generator — and what
 * couples them under the lifecycle (member ids, the replacement cap) is kept exactly by a ledger the
 * shards share (shard-ledger.ts), so verdicts, lifecycle changes and snapshots are those of one thread
 * for the same seed, whatever the number of threads.
 *
 * Work moves in batches of rows (a frame), not rows: each worker scores (and trains) its seats on the
 * whole batch, then combines the rows' votes chunk by chunk with the others, as the rows are answered by
 * every shard (shard-votes.ts). Rows and answers cross threads in shared memory (see `shard-channel.ts`),
 * so a batch costs no copies; this thread holds no seats and, while the workers run, never blocks
 * (`Atomics.waitAsync`), so its event loop keeps serving.
 *
 * A batch goes out when it is sent (its rows and labels copied at once), and its promise resolves once
 * its verdicts are in `out`; three batches may be out at once (`batchesOut`), run in the order sent,
 * so the workers can start on the next batch while this thread reads the verdicts of one, and a worker
 * through a batch finds the next one already sent (a fourth is refused until the first is in). The
 * figures (`rows`, `seats`, …) are those after the last batch in; a snapshot waits for the batches out
 * and is taken after them.
 *
 * @example
 * const bag = await ParallelBagging.start(schema, { members: 10 }, 7, 2);
 * await bag.scoreTrainBatch(frame.values, frame.labels, frame.rows, verdicts);
 * const next = bag.scoreTrainBatch(more.values, more.labels, more.rows, moreVerdicts); // out at once…
 * const after = bag.scoreTrainBatch(last.values, last.labels, last.rows, lastVerdicts); // …with this one
 * await next; // moreVerdicts are in; the workers go on with the last batch meanwhile
 * await after;
 * const snapshot = await bag.snapshot(); // equal to one thread's: `Bagging.restore(snapshot)` goes on
 * await bag.close();
 */
/** A worker thread holding one shard, and the channel to it. */
interface RemoteShard {
  /** The thread, and why it stopped once it has (noticed between batches). */
  readonly thread: ShardThread;
  readonly client: ShardClient;
  /** Where the worker writes its status after each batch, by slot. */
  readonly status: readonly Float64Array[];
  /** Seats of the shards before it. */
  readonly first: number;
}

/** The shared memory of one batch out (see `SLOTS`), grown as needed. */
class Slot {
  readonly index: number;
  values = new Float64Array(new SharedArrayBuffer(0));
  labels = new Float64Array(new SharedArrayBuffer(0));
  /** Each shard's answers. */
  readonly answers: ShardAnswers[];
  /** Where the workers combine the batch's verdicts. */
  readonly verdicts = new SharedVerdicts();
  /** The buffers of the slot's last batch (the workers keep views of them). */
  sent: BatchBuffers | null = null;

  constructor(index: number, shards: number) {
    this.index = index;
    this.answers = Array.from({ length: shards }, () => new ShardAnswers());
  }
}

export class ParallelBagging {
  /** Batches that may be out at once (sent, their verdicts not yet in). */
  static readonly batchesOut = SLOTS;
  readonly kind = 'bagging';
  readonly schema: FeatureSchema;
  readonly options: BaggingOptions;
  readonly members: number;
  private readonly seed: string;
  /** Where the threads go back when this closes (ended instead when null). */
  private readonly pool: ShardPool | null;
  private readonly shards: RemoteShard[];
  private readonly clients: ShardClient[];
  /** Seats held by each shard. */
  private readonly counts: number[];
  private readonly ledger: LedgerHost;
  /** The shards' tally of answers (see `answerTally`). */
  private readonly tally: Int32Array;
  /** The shared memory of the batches out: batch k (from 0) goes in slot k mod SLOTS. */
  private readonly slots: Slot[];
  /** The sets of ledger words, one a slot: batch k uses set k mod SLOTS. */
  private readonly ledgers: LedgerWords[];
  /** The words of each set the workers were last sent. */
  private readonly ledgersSent: (SharedArrayBuffer | null)[] = Array.from({ length: SLOTS }, () => null);
  private batches = 0;
  /** Requests out (batches and a snapshot). */
  private out = 0;
  /** A snapshot is being taken: batches wait until it is. */
  private snapshotting = false;
  /** Settles once the last batch sent is in (never rejects: its caller hears its error). */
  private last: Promise<void> = Promise.resolve();
  private trained: number;
  private known: number;
  private announced: number;
  /** The most classes a row of the batches sent may cover (by their labels). */
  private reach: number;
  /** The seats after the last batch, made when asked. */
  private views: SeatView[] | null;
  /** Each shard's status after the last batch (copied: the next batch overwrites the shared one). */
  private readonly status: Float64Array[];
  /** Each seat's kind (a seat keeps its kind). */
  private readonly kinds: string[];
  private bytes: number;

  private constructor(
    whole: Bagging,
    snapshot: EnsembleSnapshot,
    shards: RemoteShard[],
    counts: number[],
    tally: Int32Array,
    pool: ShardPool | null,
  ) {
    const ledger = snapshot.lifecycle;
    this.pool = pool;
    this.schema = whole.schema;
    this.options = whole.options;
    this.seed = snapshot.seed;
    this.shards = shards;
    this.clients = shards.map((s) => s.client);
    this.counts = counts;
    this.tally = tally;
    this.members = whole.options.members;
    this.ledger = new LedgerHost(
      shards.length,
      whole.options.lifecycle.replacementWindow,
      ledger.replacements,
      ledger.epoch,
    );
    this.trained = whole.rows;
    this.known = whole.classes;
    this.announced = whole.classes;
    this.reach = whole.classes;
    this.slots = Array.from({ length: SLOTS }, (_, i) => new Slot(i, shards.length));
    this.ledgers = Array.from({ length: SLOTS }, () => new LedgerWords(shards.length));
    this.views = whole.seats();
    this.kinds = this.views.map((v) => v.kind);
    this.status = shards.map((s) => new Float64Array(s.status[0]!.length));
    this.bytes = whole.sizeBytes();
  }

  /**
   * Start a bagging ensemble with its seats over `threads` worker threads (as evenly as they go);
   * `journal` hears the seats' creation, as from `new Bagging`. The threads come from `pool` and go
   * back to it on `close` (see `ShardPool`); without one they are started here and ended on `close`.
   */
  static start(
    schema: FeatureSchema,
    spec: BaggingSpec,
    seed: Seed,
    threads: number,
    journal: LifecycleSink = () => {},
    pool: ShardPool | null = null,
  ): Promise<ParallelBagging> {
    return ParallelBagging.launch(new Bagging(schema, spec, seed, journal), threads, pool);
  }

  /**
   * Go on from a bagging snapshot (of one thread or of any number of threads) over `threads` threads,
   * from `pool` when given (as `start`).
   */
  static restore(
    snapshot: EnsembleSnapshot,
    threads: number,
    pool: ShardPool | null = null,
  ): Promise<ParallelBagging> {
    return ParallelBagging.launch(Bagging.restore(snapshot), threads, pool);
  }

  private static async launch(
    whole: Bagging,
    threads: number,
    pool: ShardPool | null,
  ): Promise<ParallelBagging> {
    integerAtLeast('parallel bagging', 'threads', threads, 1);
    const snapshot = whole.snapshot();
    const members = whole.options.members;
    const count = Math.min(threads, members);
    const counts = Array.from(
      { length: count },
      (_, i) => Math.floor(((i + 1) * members) / count) - Math.floor((i * members) / count),
    );
    const firsts = counts.map((_, i) => counts.slice(0, i).reduce((a, b) => a + b, 0));
    const tally = answerTally();
    const hosts = counts.map(() => pool?.take() ?? startThread());
    try {
      const shards = await Promise.all(
        counts.map((n, i) => hostShard(hosts[i]!, snapshot, whole.options, tally, i, count, firsts[i]!, n)),
      );
      return new ParallelBagging(whole, snapshot, shards, counts, tally, pool);
    } catch (e) {
      // A shard that did not start fails the ensemble: the threads that did start one hold it for good.
      await Promise.all(hosts.map((t) => t.worker.terminate()));
      throw e;
    }
  }

  /** Classes known so far. */
  get classes(): number {
    return this.known;
  }

  /** Rows trained on so far. */
  get rows(): number {
    return this.trained;
  }

  /** Seat replacements so far. */
  get epoch(): number {
    return this.ledger.epoch;
  }

  /** Announce that labels 0 … n−1 exist (sent with the next batch). */
  ensureClasses(n: number): void {
    if (n > this.announced) this.announced = n;
  }

  /** The seats as they were after the last batch in. */
  seats(): SeatView[] {
    this.views ??= this.shards.flatMap((s, i) => statusSeats(this.status[i]!, s.first, this.kinds));
    return this.views;
  }

  /** The members' size after the last batch in. */
  sizeBytes(): number {
    return this.bytes;
  }

  /**
   * Score every row of a batch, and train on each row whose label is not NaN (the prequential step),
   * row by row exactly as one thread's `scoreTrain` (or `score`, for a NaN label) would. The rows and
   * labels are copied before this returns; the verdicts are in `out` once the promise resolves.
   */
  scoreTrainBatch(
    values: Float64Array,
    labels: ArrayLike<number>,
    rows: number,
    out: BatchVerdicts,
  ): Promise<void> {
    if (labels.length < rows) {
      return Promise.reject(
        new ShoalError(
          'invalid-label',
          `parallel bagging: a batch of ${rows} rows needs ${rows} labels, got ${labels.length}`,
        ),
      );
    }
    return this.send(values, labels, rows, out);
  }

  /** Score every row of a batch (as `scoreTrainBatch`, training on none). */
  scoreBatch(values: Float64Array, rows: number, out: BatchVerdicts): Promise<void> {
    return this.send(values, null, rows, out);
  }

  /**
   * The ensemble's snapshot after the batches sent so far, as one thread's `Bagging.snapshot()` would
   * give it (batches sent while it is taken are refused).
   */
  async snapshot(): Promise<EnsembleSnapshot> {
    if (this.snapshotting) throw this.refusal();
    this.snapshotting = true;
    let parts: EnsembleSnapshot[];
    try {
      await this.last;
      this.alive();
      parts = (await this.answers(this.post({ kind: 'snapshot' }))).map((r) => r.snapshot!);
    } finally {
      this.snapshotting = false;
    }
    const first = parts[0]!;
    const ledger = this.ledger;
    const lifecycle: LifecycleSnapshot = {
      seats: parts.flatMap((p) => p.lifecycle.seats),
      replacements: [...ledger.history],
      epoch: ledger.epoch,
      classes: first.lifecycle.classes,
    };
    return {
      kind: first.kind,
      version: first.version,
      schema: first.schema,
      options: { ...this.options },
      seed: this.seed,
      rows: first.rows,
      lifecycle,
      state: { poisson: parts.flatMap((p) => (p.state as { poisson: unknown[] }).poisson) },
    };
  }

  /**
   * Stop the shards once the batches out are in: their threads go back to the pool, or end when there
   * is none (or when a snapshot is still being taken, so that no thread goes back busy).
   */
  async close(): Promise<void> {
    await this.last;
    for (const s of this.shards) {
      s.client.post({ kind: 'stop' });
      s.client.wake();
    }
    const pool = this.pool;
    if (pool !== null && this.out === 0) for (const s of this.shards) pool.give(s.thread);
    else await Promise.all(this.shards.map((s) => s.thread.worker.terminate()));
  }

  /**
   * Send a batch (trained on with `labels`, or scored when null) to the workers now, in the next slot;
   * resolves once its verdicts are in `out`, after those of the batches sent before it.
   */
  private send(
    values: Float64Array,
    labels: ArrayLike<number> | null,
    rows: number,
    out: BatchVerdicts,
  ): Promise<void> {
    const width = this.schema.features.length;
    if (!(Number.isInteger(rows) && rows >= 0 && values.length >= rows * width)) {
      return Promise.reject(
        new ShoalError(
          'invalid-row',
          `parallel bagging: a batch of ${rows} rows needs ${rows * width} values, the buffer holds ${values.length}`,
        ),
      );
    }
    try {
      this.ready();
    } catch (e) {
      return Promise.reject(e);
    }
    const slot = this.slots[this.batches % SLOTS]!;
    const set = this.batches++ % SLOTS;
    const ledger = this.ledgers[set]!;
    let classes = Math.max(this.reach, this.announced);
    if (labels !== null) {
      if (slot.labels.length < rows) slot.labels = new Float64Array(new SharedArrayBuffer(8 * rows));
      for (let r = 0; r < rows; r++) {
        const label = labels[r]!;
        slot.labels[r] = label;
        // A label that is no class code fails its batch at its row, and is not counted.
        if (label >= classes && label < MAX_CLASSES && Number.isInteger(label)) classes = label + 1;
      }
      this.reach = classes;
    }
    if (slot.values.length < rows * width)
      slot.values = new Float64Array(new SharedArrayBuffer(8 * rows * width));
    slot.values.set(values.subarray(0, rows * width));
    ledger.prepare(rows, Math.max(...this.counts));
    const words = ledger.words.buffer;
    const fresh = this.ledgersSent[set] !== words;
    this.ledgersSent[set] = words;
    const stride = Math.max(classes, 1);
    const buffers: BatchBuffers = {
      values: slot.values.buffer,
      labels: slot.labels.buffer,
      all: slot.answers.map((answers, i) => answers.fit(rows, this.counts[i]!, stride)),
      counts: this.counts,
      verdicts: slot.verdicts.fit(rows, stride, this.members),
    };
    // The workers keep the buffers of the slot's last batch: new ones go out only when one changed.
    const changed = slot.sent === null || !sameBuffers(slot.sent, buffers);
    if (changed) slot.sent = buffers;
    const request = this.post({
      kind: 'batch',
      slot: slot.index,
      rows,
      classes: this.announced,
      train: labels !== null,
      buffers: changed ? buffers : null,
      ledger: set,
      words: fresh ? words : null,
      cap: ledger.cap,
    });
    const done = this.collect(request, slot, ledger, rows, stride, out, this.last);
    this.last = done.then(
      () => {},
      () => {},
    );
    return done;
  }

  /** Take in the answers of batch request `request` (in `slot`), once the batches before it are in. */
  private async collect(
    request: number,
    slot: Slot,
    ledger: LedgerWords,
    rows: number,
    stride: number,
    out: BatchVerdicts,
    before: Promise<void>,
  ): Promise<void> {
    await before;
    const replies = await this.answers(request);
    this.bytes = 0;
    this.shards.forEach((s, i) => {
      const status = this.status[i]!;
      status.set(s.status[slot.index]!);
      this.bytes += statusCounts(status).bytes;
    });
    ({ rows: this.trained, classes: this.known } = statusCounts(this.status[0]!));
    this.views = null;
    out.fit(rows, stride, this.members);
    this.ledger.settle(ledger.words, ledger.cap, rows, this.trained, out.epochs);
    mergeChanges(replies, out);
    // Every shard stops at the same bad row: its error is the batch's.
    const failed = replies.find((r) => r.error !== null);
    if (failed !== undefined) throw new ShoalError(failed.error!.code, failed.error!.message);
    slot.verdicts.copyTo(out, rows);
  }

  /**
   * Refuse a request while a snapshot is being taken or SLOTS batches are out (their shared memory is
   * in use), or when a worker stopped.
   */
  private ready(): void {
    if (this.snapshotting || this.out >= SLOTS) throw this.refusal();
    this.alive();
  }

  private refusal(): ShoalError {
    const why = this.snapshotting ? 'a snapshot is being taken' : `${SLOTS} batches are still out`;
    return new ShoalError('invalid-parameter', `parallel bagging: ${why}; await it before sending more`);
  }

  /** Refuse a request when a worker stopped. */
  private alive(): void {
    for (const s of this.shards) {
      const lost = s.thread.lost;
      if (lost !== null)
        throw new ShoalError('worker-failure', `parallel bagging: a worker stopped: ${lost}`);
    }
  }

  /** Send every shard a request and wake it; the request's number. */
  private post(request: ShardRequest): number {
    // A pending Atomics.waitAsync does not keep the process alive; a ref'd worker does.
    if (this.out++ === 0) for (const s of this.shards) s.thread.worker.ref();
    for (const s of this.shards) s.client.post(request);
    for (const s of this.shards) s.client.wake();
    return this.clients[0]!.sent;
  }

  /** Every shard's reply to request number `request`, once all have answered. */
  private async answers(request: number): Promise<ShardReply[]> {
    try {
      await allAnswered(this.tally, this.clients, request);
      return this.clients.map((c) => c.reply(request));
    } finally {
      if (--this.out === 0) for (const s of this.shards) s.thread.worker.unref();
    }
  }
}

/** The changes of every shard in the order one thread makes them: by row, then by seat. */
function mergeChanges(replies: readonly ShardReply[], out: BatchVerdicts): void {
  const all = replies.flatMap((r, shard) =>
    r.changes.map((change, i) => ({ change, row: r.steps[i]!, shard })),
  );
  all.sort((a, b) => a.row - b.row || a.shard - b.shard);
  for (const { change, row } of all) {
    out.changes.push(change);
    out.rows.push(row);
  }
}

/** Host shard `i` on `thread`: seats `first` … `first + n − 1` of the ensemble in `snapshot`. */
async function hostShard(
  thread: ShardThread,
  snapshot: EnsembleSnapshot,
  options: BaggingOptions,
  tally: Int32Array,
  i: number,
  shards: number,
  first: number,
  n: number,
): Promise<RemoteShard> {
  const { port1, port2 } = new MessageChannel();
  const control = channelControl();
  const status = Array.from({ length: SLOTS }, () => shardStatus(n));
  const state = snapshot.state as { poisson: unknown[] };
  const part: EnsembleSnapshot = {
    ...snapshot,
    options: { ...options, members: n },
    lifecycle: { ...snapshot.lifecycle, seats: snapshot.lifecycle.seats.slice(first, first + n) },
    state: { poisson: state.poisson.slice(first, first + n) },
  };
  const host: ShardHost = {
    schema: snapshot.schema,
    spec: part.options as ShardHost['spec'],
    seed: snapshot.seed,
    first,
    shard: i,
    shards,
    seats: options.members,
    restored: part,
    port: port2,
    control,
    status,
    tally,
  };
  const { worker } = thread;
  // A pending Atomics.waitAsync does not keep the process alive while the shard is built; a ref'd worker does.
  worker.ref();
  worker.postMessage(host, [port2]);
  await new Promise<void>((resolve, reject) => {
    const failed = (e: unknown) =>
      reject(new ShoalError('worker-failure', `parallel bagging: a worker did not start: ${reason(e)}`));
    const exited = (code: number) => failed(`exited with code ${code}`);
    worker.once('error', failed);
    worker.once('exit', exited);
    // A thread that stopped before these listeners were set has said so already.
    if (thread.lost !== null) failed(thread.lost);
    shardReady(control).then(() => {
      worker.off('error', failed);
      worker.off('exit', exited);
      resolve();
    }, failed);
  }).finally(() => worker.unref());
  port1.unref();
  return { thread, client: new ShardClient(port1, control), status, first };
}

function reason(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}
