import { type MessagePort, receiveMessageOnPort } from 'node:worker_threads';
import { ShoalError, type ShoalErrorCode } from '../core/index.js';
import { type Bagging, Verdict } from '../ensembles/index.js';

/**
 * How a batch of rows reaches a shard of a bagging ensemble in another thread, and how its members'
 * answers come back, without copies: rows, labels and answers live in shared memory, and control words
 * wake the sides — the worker blocks in `Atomics.wait`, the main thread awaits `Atomics.waitAsync`, so
 * its event loop (Kafka heartbeats, scrapes) runs while a batch is out — request number, number of
 * requests done, status of the last (0 = answered, 1 = failed), a progress counter the shard bumps
 * every 256 rows, so that the waiting side can tell a long batch from a worker that stopped, and a
 * ready flag the worker raises once its shard is built. A request names its buffers in a message on
 * a port that the worker reads synchronously when woken.
 */
const C_REQUEST = 0;
const C_DONE = 1;
const C_STATUS = 2;
const C_PROGRESS = 3;
const C_READY = 4;
const PROGRESS_EVERY = 256;
/** A worker that makes no progress for this long is declared lost. */
const SILENCE_MS = 30_000;
const WAIT_MS = 1000;

/** A batch for a shard: shared rows (and labels when training), and where the answers go. */
export interface ShardRequest {
  readonly stop: boolean;
  readonly rows: number;
  readonly classes: number;
  readonly values: SharedArrayBuffer | ArrayBuffer;
  readonly labels: SharedArrayBuffer | ArrayBuffer | null;
  readonly probs: SharedArrayBuffer | ArrayBuffer;
  readonly preds: SharedArrayBuffer | ArrayBuffer;
  readonly weights: SharedArrayBuffer | ArrayBuffer;
}

/**
 * Where one shard writes its members' answers, row-major: probabilities, classes, and each member's
 * vote weight and confidence side by side in `weights`.
 */
export interface AnswerArrays {
  readonly probs: Float64Array;
  readonly preds: Int32Array;
  readonly weights: Float64Array;
}

/** Answer arrays that grow with the batch, in shared memory when another thread writes them. */
export class ShardAnswers implements AnswerArrays {
  probs: Float64Array;
  preds: Int32Array;
  weights: Float64Array;
  private readonly shared: boolean;

  constructor(shared: boolean) {
    this.shared = shared;
    this.probs = new Float64Array(this.buffer(0));
    this.preds = new Int32Array(this.buffer(0));
    this.weights = new Float64Array(this.buffer(0));
  }

  /** Make room for `rows` rows of `members` answers over `classes` classes. */
  fit(rows: number, members: number, classes: number): void {
    if (this.probs.length < rows * members * classes) {
      this.probs = new Float64Array(this.buffer(8 * rows * members * classes));
    }
    if (this.preds.length < rows * members) {
      this.preds = new Int32Array(this.buffer(4 * rows * members));
      this.weights = new Float64Array(this.buffer(16 * rows * members));
    }
  }

  private buffer(bytes: number): SharedArrayBuffer | ArrayBuffer {
    return this.shared ? new SharedArrayBuffer(bytes) : new ArrayBuffer(bytes);
  }
}

/**
 * Score (no labels) or score and train a shard on a batch, writing every member's answers row by row
 * into `answers` (sized by the caller); bumps `control`'s progress counter when given.
 */
export function runShard(
  shard: Bagging,
  values: Float64Array,
  labels: Float64Array | null,
  rows: number,
  classes: number,
  answers: AnswerArrays,
  control: Int32Array | null,
): void {
  const width = shard.schema.features.length;
  shard.ensureClasses(classes);
  const members = shard.options.members;
  const c = shard.classes;
  const { probs, preds, weights } = answers;
  const verdict = new Verdict();
  for (let r = 0; r < rows; r++) {
    if (labels === null) shard.score(values, r * width, verdict);
    else shard.train(values, r * width, labels[r]!);
    const m = shard.members;
    const at = r * members;
    for (let i = 0; i < members; i++) {
      preds[at + i] = m.preds[i]!;
      weights[2 * (at + i)] = m.weights[i]!;
      weights[2 * (at + i) + 1] = m.confidence[i]!;
    }
    const span = members * c;
    for (let i = 0, to = at * c; i < span; i++) probs[to + i] = m.probs[i]!;
    if (control !== null && r % PROGRESS_EVERY === 0) Atomics.add(control, C_PROGRESS, 1);
  }
}

/** The control words of a channel, in shared memory. */
export function channelControl(): Int32Array {
  return new Int32Array(new SharedArrayBuffer(4 * 5));
}

// Atomics.waitAsync is in Node 16 and later, but not yet in TypeScript's ES2022 library.
const atomics = Atomics as unknown as {
  waitAsync(
    array: Int32Array,
    index: number,
    value: number,
    timeout?: number,
  ): { async: boolean; value: string | Promise<string> };
};

/**
 * Resolves with `ok`, `not-equal` or `timed-out` once `array[index]` is no longer `value` (or after
 * `timeout` ms), without blocking the thread. A pending wait does not keep Node's event loop alive
 * (nodejs/node#61941): the caller holds a ref'd handle meanwhile.
 */
async function waitAsync(array: Int32Array, index: number, value: number, timeout?: number): Promise<string> {
  const wait = atomics.waitAsync(array, index, value, timeout);
  return wait.async ? await wait.value : (wait.value as string);
}

/** Resolves when the worker behind `control` has built its shard and waits for requests. */
export async function shardReady(control: Int32Array): Promise<void> {
  await waitAsync(control, C_READY, 0);
}

/** The main thread's end of a channel: post a request, later wait for its answer. */
export class ShardClient {
  private readonly port: MessagePort;
  private readonly control: Int32Array;
  private sent = 0;

  constructor(port: MessagePort, control: Int32Array) {
    this.port = port;
    this.control = control;
  }

  post(request: ShardRequest): void {
    this.port.postMessage(request);
    Atomics.store(this.control, C_REQUEST, ++this.sent);
    Atomics.notify(this.control, C_REQUEST);
  }

  /** Ask the worker to leave its loop. */
  stop(): void {
    const none = new ArrayBuffer(0);
    this.post({
      stop: true,
      rows: 0,
      classes: 0,
      values: none,
      labels: null,
      probs: none,
      preds: none,
      weights: none,
    });
  }

  /**
   * Resolves when the last request is answered, never blocking this thread; rejects when the shard
   * failed or went silent.
   */
  async collect(): Promise<void> {
    const control = this.control;
    let progress = Atomics.load(control, C_PROGRESS);
    let silent = 0;
    while (Atomics.load(control, C_DONE) !== this.sent) {
      if ((await waitAsync(control, C_DONE, this.sent - 1, WAIT_MS)) !== 'timed-out') continue;
      const now = Atomics.load(control, C_PROGRESS);
      silent = now === progress ? silent + WAIT_MS : 0;
      progress = now;
      if (silent >= SILENCE_MS) {
        throw new ShoalError(
          'worker-failure',
          `parallel bagging: a worker made no progress for ${SILENCE_MS / 1000} s`,
        );
      }
    }
    if (Atomics.load(control, C_STATUS) !== 0) {
      // The shard's own error, with its code, as if it had been raised in this thread.
      const reason = receiveMessageOnPort(this.port)?.message as { code: ShoalErrorCode; message: string };
      throw new ShoalError(reason.code, reason.message);
    }
  }
}

/** Mark request number `done` answered (`failed`: with an error message posted first) and wake the waiter. */
export function markAnswered(control: Int32Array, done: number, failed: boolean): void {
  Atomics.store(control, C_STATUS, failed ? 1 : 0);
  Atomics.store(control, C_DONE, done);
  Atomics.notify(control, C_DONE);
}

/**
 * The worker's end: answer requests with `shard` until a stop request arrives. Blocks its thread
 * between requests.
 */
export function serveShard(shard: Bagging, port: MessagePort, control: Int32Array): void {
  Atomics.store(control, C_READY, 1);
  Atomics.notify(control, C_READY);
  let done = 0;
  for (;;) {
    Atomics.wait(control, C_REQUEST, done);
    // Requests are answered in order, one message each, however many arrived while this thread worked.
    for (let m = receiveMessageOnPort(port); m !== undefined; m = receiveMessageOnPort(port)) {
      const request = m.message as ShardRequest;
      if (request.stop) {
        port.close();
        return;
      }
      let failed = false;
      try {
        const answers: AnswerArrays = {
          probs: new Float64Array(request.probs),
          preds: new Int32Array(request.preds),
          weights: new Float64Array(request.weights),
        };
        const values = new Float64Array(request.values);
        const labels = request.labels === null ? null : new Float64Array(request.labels);
        runShard(shard, values, labels, request.rows, request.classes, answers, control);
      } catch (e) {
        failed = true;
        port.postMessage(
          e instanceof ShoalError
            ? { code: e.code, message: e.message }
            : { code: 'worker-failure', message: `parallel bagging: a worker failed: ${String(e)}` },
        );
      }
      markAnswered(control, ++done, failed);
    }
  }
}
