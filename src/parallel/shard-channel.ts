import { type MessagePort, receiveMessageOnPort } from 'node:worker_threads';
import { ShoalError, type ShoalErrorCode } from '../core/index.js';
import type { Bagging, EnsembleSnapshot, SeatView } from '../ensembles/index.js';
import { type LifecycleChange, MEMBER_STATES } from '../journal/index.js';
import { FAILED, NONE_LEFT, NOT_READY, poll, type ShardLedger } from './shard-ledger.js';
import {
  type AnswerBuffers,
  type AnswerViews,
  answerViews,
  RowCombiner,
  type VerdictBuffers,
} from './shard-votes.js';

/**
 * How a batch of rows reaches a shard of a bagging ensemble in another thread, and how its members'
 * answers come back, without copies: rows, labels, answers and the ledger (shard-ledger.ts) live in
 * shared memory, and control words wake the sides — the worker polls a few microseconds, then blocks in
 * `Atomics.wait`; the main thread awaits `Atomics.waitAsync`, so its event loop (Kafka heartbeats,
 * scrapes) runs while a batch is out — request number, number of requests done, a progress counter the
 * shard bumps every 256 rows, so that the waiting side can tell a long batch from a worker that stopped,
 * and a ready flag the worker raises once its shard is built; a tally all shards share wakes the main
 * thread once every shard has answered (see `answerTally`). A batch request (its size, slot, ledger)
 * is written in a ring in the control words; one whose shared buffers changed (a message carrying some
 * twenty shared buffers costs tens of microseconds to send and to read), a snapshot or a stop goes as a
 * message on a port that the worker reads synchronously when woken. Three batches may be out at once,
 * in slots of their own (see `SLOTS`): a worker through with one finds the next waiting, while the main
 * thread reads the answers of the first. The worker writes its status (rows, classes, size, its seats)
 * in the batch's slot of shared memory once its seats are through a batch (before it combines votes),
 * and a reply comes back as a message only when it has news (the lifecycle changes of the batch, an
 * error, a snapshot when asked), numbered by its request, before the request is marked done.
 */
const C_REQUEST = 0;
const C_DONE = 1;
const C_PROGRESS = 2;
const C_READY = 3;
/**
 * Where the ring of requests starts in the control words (a cache line on: the words before it are the
 * worker's to write). A batch whose buffers did not change is written there, rather than sent as a
 * message (which costs each side some microseconds, and the sender a wake-up of the worker's loop);
 * anything else goes as a message, and its entry in the ring says so.
 */
const C_RING = 16;
/** Entries of the ring: more than requests can be out at once (SLOTS batches, and a stop sent meanwhile). */
const RING = 8;
/** Words of an entry: how the request is sent, then a batch's slot, rows, classes, train, ledger, cap. */
const ENTRY = 8;
const BY_MESSAGE = 0;
const IN_WORDS = 1;
const PROGRESS_EVERY = 256;
/** Rows the workers combine at a time. */
const CHUNK = 64;
/** A worker that makes no progress for this long is declared lost. */
const SILENCE_MS = 30_000;
const WAIT_MS = 1000;

/**
 * The shared memory of a batch: rows and labels, every shard's answers (shard w's at w, in shard order)
 * and the seats each holds, and where the combined verdicts go. Sent only when one of them changes (a
 * larger batch, a new class): a worker keeps its views of the last ones of each slot.
 */
export interface BatchBuffers {
  readonly values: SharedArrayBuffer;
  readonly labels: SharedArrayBuffer;
  readonly all: readonly AnswerBuffers[];
  readonly counts: readonly number[];
  readonly verdicts: VerdictBuffers;
}

/**
 * Batches that may be out at once: each batch out has a slot of shared memory of its own (rows, answers,
 * verdicts, ledger, status), so the next batch can go out while this thread reads the answers of one.
 * Three rather than two: a worker may close a batch and run the next before the other worker is through
 * the one it closed (see `serveShard`); with two out, the slower worker, through a batch, often found
 * the next not yet sent — the main thread sends it only once the batch before is answered and read —
 * and waited some 200 µs a 1,000-row batch for it. Alternated in one process, two threads with three
 * out ran ×10 1.02–1.07× as fast as with two out (lifecycle on and off), ×30 about 1.02×.
 */
export const SLOTS = 3;

/**
 * A batch for a shard: its rows, trained on (labels NaN: score only) or scored, in slot `slot`; the
 * ledger's layout (`cap`). The ledger's start is the shard's own (see `ShardLedger.end`).
 */
export interface BatchRequest {
  readonly kind: 'batch';
  readonly slot: number;
  readonly rows: number;
  readonly classes: number;
  readonly train: boolean;
  /** The slot's buffers, when they changed since the slot's last batch (null: the same). */
  readonly buffers: BatchBuffers | null;
  /** The set of ledger words, its words when they changed since it was last used (null: the same). */
  readonly ledger: number;
  readonly words: SharedArrayBuffer | null;
  readonly cap: number;
}

/** Whether two sets of batch buffers are the same memory. */
export function sameBuffers(a: BatchBuffers, b: BatchBuffers): boolean {
  return (
    a.values === b.values &&
    a.labels === b.labels &&
    a.verdicts === b.verdicts &&
    a.all.every((answers, i) => answers === b.all[i])
  );
}

export type ShardRequest = BatchRequest | { readonly kind: 'snapshot' } | { readonly kind: 'stop' };

/**
 * What a shard has to say after a request, beyond its status: sent as a message only when there is
 * something (a lifecycle change, an error, a snapshot), since a message costs tens of microseconds.
 */
export interface ShardReply {
  /** The number of the request it answers (requests are numbered from 1, in the order sent). */
  readonly request: number;
  readonly error: { readonly code: ShoalErrorCode; readonly message: string } | null;
  /** Lifecycle changes of the batch, in order, and the step of each. */
  readonly changes: readonly LifecycleChange[];
  readonly steps: readonly number[];
  readonly snapshot: EnsembleSnapshot | null;
}

/** The reply of request `request` with nothing to say. */
function noNews(request: number): ShardReply {
  return { request, error: null, changes: [], steps: [], snapshot: null };
}

/**
 * A shard's status after each batch, in shared memory: rows trained, classes, size in bytes, then
 * per seat its member id, state, age, recent accuracy, error estimate and whether it has an
 * understudy — what its seat views say but the kind, which a seat keeps.
 */
const STATUS_HEAD = 3;
const SEAT_WORDS = 6;

/** Room for the status of a shard of `seats` seats. */
export function shardStatus(seats: number): Float64Array<SharedArrayBuffer> {
  return new Float64Array(new SharedArrayBuffer(8 * (STATUS_HEAD + SEAT_WORDS * seats)));
}

function writeStatus(status: Float64Array, shard: Bagging): void {
  status[0] = shard.rows;
  status[1] = shard.classes;
  status[2] = shard.sizeBytes();
  shard.seats().forEach((view, i) => {
    const at = STATUS_HEAD + SEAT_WORDS * i;
    status[at] = view.member;
    status[at + 1] = MEMBER_STATES.indexOf(view.state);
    status[at + 2] = view.age;
    status[at + 3] = view.recentAccuracy;
    status[at + 4] = view.errorEstimate;
    status[at + 5] = view.understudy ? 1 : 0;
  });
}

/** Rows trained, classes and size in a status. */
export function statusCounts(status: Float64Array): { rows: number; classes: number; bytes: number } {
  return { rows: status[0]!, classes: status[1]!, bytes: status[2]! };
}

/** The seat views in a status of the seats `first` …, whose kinds are `kinds` (by seat). */
export function statusSeats(status: Float64Array, first: number, kinds: readonly string[]): SeatView[] {
  const seats = (status.length - STATUS_HEAD) / SEAT_WORDS;
  return Array.from({ length: seats }, (_, i) => {
    const at = STATUS_HEAD + SEAT_WORDS * i;
    return {
      seat: first + i,
      member: status[at]!,
      kind: kinds[first + i]!,
      state: MEMBER_STATES[status[at + 1]!]!,
      age: status[at + 2]!,
      recentAccuracy: status[at + 3]!,
      errorEstimate: status[at + 4]!,
      understudy: status[at + 5] === 1,
    };
  });
}

/**
 * Answer arrays in shared memory that grow with the batch, where one shard's members write their answers
 * (`Bagging.answerInto`), row-major with `stride` classes a member: probabilities, predicted
 * classes, vote weights and confidences; beside them the classes each row's answers cover (they grow
 * when a label of a new class is learnt), and each seat's recent accuracy after the row.
 */
export class ShardAnswers {
  stride = 0;
  probs = new Float64Array(new SharedArrayBuffer(0));
  preds = new Int32Array(new SharedArrayBuffer(0));
  weights = new Float64Array(new SharedArrayBuffer(0));
  confidence = new Float64Array(new SharedArrayBuffer(0));
  classes = new Int32Array(new SharedArrayBuffer(0));
  accuracy = new Float64Array(new SharedArrayBuffer(0));

  /** The last buffers handed out: the same object while none changed. */
  private buffers: AnswerBuffers | null = null;

  /** Make room for `rows` rows of `members` answers over `stride` classes. */
  fit(rows: number, members: number, stride: number): AnswerBuffers {
    let changed = this.buffers === null || stride !== this.stride;
    this.stride = stride;
    if (this.probs.length < rows * members * stride) {
      this.probs = new Float64Array(new SharedArrayBuffer(8 * rows * members * stride));
      changed = true;
    }
    if (this.preds.length < rows * members) {
      this.preds = new Int32Array(new SharedArrayBuffer(4 * rows * members));
      this.weights = new Float64Array(new SharedArrayBuffer(8 * rows * members));
      this.confidence = new Float64Array(new SharedArrayBuffer(8 * rows * members));
      this.accuracy = new Float64Array(new SharedArrayBuffer(8 * rows * members));
      changed = true;
    }
    if (this.classes.length < rows) {
      this.classes = new Int32Array(new SharedArrayBuffer(4 * rows));
      changed = true;
    }
    if (!changed) return this.buffers!;
    this.buffers = {
      stride,
      probs: this.probs.buffer,
      preds: this.preds.buffer,
      weights: this.weights.buffer,
      confidence: this.confidence.buffer,
      classes: this.classes.buffer,
      accuracy: this.accuracy.buffer,
    };
    return this.buffers;
  }
}

/** A worker's views of the batch buffers, made when they change. */
class BatchViews {
  readonly values: Float64Array;
  readonly labels: Float64Array;
  /** This shard's answers. */
  readonly answers: AnswerViews;
  readonly stride: number;
  readonly combiner: RowCombiner;

  constructor(buffers: BatchBuffers, shard: number, hard: boolean) {
    this.values = new Float64Array(buffers.values);
    this.labels = new Float64Array(buffers.labels);
    this.answers = answerViews(buffers.all[shard]!);
    this.stride = buffers.all[shard]!.stride;
    this.combiner = new RowCombiner(buffers.all, buffers.counts, hard, buffers.verdicts);
  }
}

/**
 * Score (label NaN) or score and train a shard on each row of a batch, writing every member's answers
 * row by row; the ledger is told each step and each step done.
 */
function runShard(
  shard: Bagging,
  ledger: ShardLedger,
  request: BatchRequest,
  views: BatchViews,
  control: Int32Array,
  meanwhile: () => void,
): void {
  const { rows, train } = request;
  const { values, labels, stride } = views;
  const classes = views.answers.classes;
  const width = shard.schema.features.length;
  shard.answerInto(views.answers, stride);
  shard.ensureClasses(request.classes);
  const members = shard.options.members;
  for (let r = 0; r < rows; r++) {
    ledger.step = r;
    const at = r * members;
    shard.answerAt(at);
    // The classes the row's answers cover: a label of a new class grows them after the row.
    classes[r] = shard.classes;
    const label = train ? labels[r]! : Number.NaN;
    if (Number.isNaN(label)) shard.scoreMembers(values, r * width);
    else shard.train(values, r * width, label);
    ledger.done(r + 1);
    if (r % PROGRESS_EVERY === 0) Atomics.add(control, C_PROGRESS, 1);
    if (r % CHUNK === CHUNK - 1) meanwhile();
  }
}

/**
 * A batch this shard is through (its rows answered, its status written) but has not answered yet: the
 * other shards may still be on it, and chunks of its rows may be left to combine.
 */
interface ClosedBatch {
  /** The request's number. */
  readonly request: number;
  readonly rows: number;
  readonly combiner: RowCombiner;
  /** The batch's ledger words. */
  readonly words: Int32Array;
  /** The shard's lifecycle changes in the batch, the step of each, and its error. */
  readonly changes: LifecycleChange[];
  readonly steps: number[];
  readonly error: ShardReply['error'];
}

/**
 * Combine the chunks of a closed batch that every shard has answered, never waiting; true when none is
 * left (every chunk claimed).
 */
function combineReady(ledger: ShardLedger, batch: ClosedBatch): boolean {
  for (;;) {
    const chunk = ledger.claim(batch.words, batch.rows, CHUNK);
    if (chunk === NONE_LEFT) return true;
    if (chunk === NOT_READY) return false;
    batch.combiner.rows(chunk * CHUNK, Math.min(batch.rows, (chunk + 1) * CHUNK));
  }
}

/** The control words of a channel, in shared memory. */
export function channelControl(): Int32Array {
  return new Int32Array(new SharedArrayBuffer(4 * (C_RING + RING * ENTRY)));
}

/** Request number `n`, as the main thread sent it (see `ShardClient.post`). */
function takeRequest(control: Int32Array, port: MessagePort, n: number): ShardRequest {
  const at = C_RING + (n % RING) * ENTRY;
  if (control[at] === BY_MESSAGE) return receiveMessageOnPort(port)!.message as ShardRequest;
  return {
    kind: 'batch',
    slot: control[at + 1]!,
    rows: control[at + 2]!,
    classes: control[at + 3]!,
    train: control[at + 4] === 1,
    buffers: null,
    ledger: control[at + 5]!,
    words: null,
    cap: control[at + 6]!,
  };
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

/** The main thread's end of a channel: post a request, later read its reply. */
export class ShardClient {
  private readonly port: MessagePort;
  private readonly control: Int32Array;
  /** Requests sent so far. */
  sent = 0;
  /** Replies read from the port ahead of the request asked about (of requests sent after it). */
  private readonly ahead: ShardReply[] = [];

  constructor(port: MessagePort, control: Int32Array) {
    this.port = port;
    this.control = control;
  }

  /**
   * Send a request (the worker reads it once woken): in the ring of the control words when it is a
   * batch with no new buffers, else as a message.
   */
  post(request: ShardRequest): void {
    const control = this.control;
    const at = C_RING + ((this.sent + 1) % RING) * ENTRY;
    if (request.kind !== 'batch' || request.buffers !== null || request.words !== null) {
      control[at] = BY_MESSAGE;
      this.port.postMessage(request);
      return;
    }
    control[at] = IN_WORDS;
    control[at + 1] = request.slot;
    control[at + 2] = request.rows;
    control[at + 3] = request.classes;
    control[at + 4] = request.train ? 1 : 0;
    control[at + 5] = request.ledger;
    control[at + 6] = request.cap;
  }

  /**
   * Wake the worker for the request sent. A woken worker may take this thread's core, so a batch is
   * sent to every worker before any is woken.
   */
  wake(): void {
    Atomics.store(this.control, C_REQUEST, ++this.sent);
    Atomics.notify(this.control, C_REQUEST);
  }

  /** Whether request number `request` is answered. */
  answered(request: number): boolean {
    return Atomics.load(this.control, C_DONE) >= request;
  }

  /** The worker's progress counter (bumped every few hundred rows of a batch). */
  progress(): number {
    return Atomics.load(this.control, C_PROGRESS);
  }

  /**
   * The reply to request number `request`, once answered (the replies of the requests before it read).
   * A reply comes only with news, and before its request is marked answered.
   */
  reply(request: number): ShardReply {
    for (;;) {
      const next = this.ahead.shift() ?? (receiveMessageOnPort(this.port)?.message as ShardReply | undefined);
      if (next === undefined) return noNews(request);
      if (next.request === request) return next;
      // A later request's reply waits for its turn; an earlier one's was given up on (see `allAnswered`).
      if (next.request > request) {
        this.ahead.unshift(next);
        return noNews(request);
      }
    }
  }
}

/**
 * The shards' tally of answers, in shared memory, a word for each entry of the ring (request n's at
 * n mod RING): every shard adds one to a request's word when it answers it, and the one that completes
 * the request's answers wakes the main thread — once a request, rather than once a shard (a wake-up
 * costs the main thread a turn of its event loop, and a core a worker may be using). A word a request:
 * a shard may answer a batch before another has answered the one ahead of it. The main thread clears a
 * request's word once it has its answers, before the entry is used again.
 */
export function answerTally(): Int32Array {
  return new Int32Array(new SharedArrayBuffer(4 * RING));
}

/**
 * Resolves once every shard has answered request number `request` (sent to all of them), never blocking
 * this thread; rejects when none of those still on it made progress for a while.
 */
export async function allAnswered(
  tally: Int32Array,
  clients: readonly ShardClient[],
  request: number,
): Promise<void> {
  const at = request % RING;
  let progress = clients.map((c) => c.progress());
  let silent = 0;
  for (let n = Atomics.load(tally, at); n < clients.length; n = Atomics.load(tally, at)) {
    if ((await waitAsync(tally, at, n, WAIT_MS)) !== 'timed-out') continue;
    const now = clients.map((c) => c.progress());
    const moved = clients.some((c, i) => !c.answered(request) && now[i] !== progress[i]);
    silent = moved ? 0 : silent + WAIT_MS;
    progress = now;
    if (silent >= SILENCE_MS) {
      throw new ShoalError(
        'worker-failure',
        `parallel bagging: a worker made no progress for ${SILENCE_MS / 1000} s`,
      );
    }
  }
  Atomics.store(tally, at, 0);
}

/**
 * Mark request number `done` answered, and count it in the tally of `shards` shards: the shard that
 * completes the request's answers wakes the main thread.
 */
function markAnswered(control: Int32Array, done: number, tally: Int32Array, shards: number): void {
  Atomics.store(control, C_DONE, done);
  if (Atomics.add(tally, done % RING, 1) + 1 === shards) Atomics.notify(tally, done % RING);
}

/**
 * The worker's end: answer requests with `shard` until a stop request arrives, writing its status after
 * each batch into the batch's slot of `status`; `changes` and `steps` collect the lifecycle changes of a
 * batch (the shard's journal). Requests are answered in order, but a batch through this shard's seats
 * is answered only once every shard is through it and its votes are combined: with the next batch
 * already out, this shard goes on with that one meanwhile, combining the closed batch's chunks between
 * its rows as they become ready (see `ClosedBatch`). Blocks its thread between requests.
 */
export function serveShard(
  shard: Bagging,
  ledger: ShardLedger,
  changes: LifecycleChange[],
  steps: number[],
  port: MessagePort,
  control: Int32Array,
  status: readonly Float64Array[],
  tally: Int32Array,
): void {
  Atomics.store(control, C_READY, 1);
  Atomics.notify(control, C_READY);
  /** Requests taken so far. */
  let taken = 0;
  /** A batch through this shard, answered once every shard is through it (see `ClosedBatch`). */
  let closed: ClosedBatch | null = null;
  const views: (BatchViews | null)[] = Array.from({ length: SLOTS }, () => null);
  const ledgers: Int32Array[] = [];
  /** Answer a closed batch, its ledger settled (every shard through it) and its chunks all combined. */
  const answer = (batch: ClosedBatch): void => {
    ledger.settleClosed();
    const { request, error, changes, steps } = batch;
    if (error !== null || changes.length > 0)
      port.postMessage({ request, error, changes, steps, snapshot: null });
    markAnswered(control, request, tally, ledger.shards);
  };
  /** Combine the rest of a closed batch as the other shards answer its rows, then answer it. */
  const finish = (batch: ClosedBatch): void => {
    while (!combineReady(ledger, batch)) ledger.awaitChunk(batch.words, batch.rows, CHUNK);
    answer(batch);
  };
  /** While a batch runs, the closed one before it: combine what is ready, answer it once none is left. */
  const meanwhile = (): void => {
    if (closed !== null && combineReady(ledger, closed)) {
      answer(closed);
      closed = null;
    }
  };
  for (;;) {
    if (Atomics.load(control, C_REQUEST) === taken) {
      // Nothing else to do: the closed batch is answered as soon as it can be.
      if (closed !== null) {
        finish(closed);
        closed = null;
      }
      // A request that comes within a few microseconds (the next batch, sent at once) finds this thread awake.
      if (poll(control, C_REQUEST, taken + 1) === taken) Atomics.wait(control, C_REQUEST, taken);
    }
    // Requests are answered in order, however many arrived while this thread worked.
    while (Atomics.load(control, C_REQUEST) > taken) {
      const request = takeRequest(control, port, ++taken);
      if (request.kind !== 'batch' && closed !== null) {
        finish(closed);
        closed = null;
      }
      if (request.kind === 'stop') {
        port.close();
        return;
      }
      if (request.kind === 'snapshot') {
        let error: ShardReply['error'] = null;
        let snapshot: EnsembleSnapshot | null = null;
        try {
          snapshot = shard.snapshot();
        } catch (e) {
          error = failure(e);
        }
        port.postMessage({ request: taken, error, changes: [], steps: [], snapshot });
        markAnswered(control, taken, tally, ledger.shards);
        continue;
      }
      let error: ShardReply['error'] = null;
      if (request.buffers !== null) {
        const hard = shard.options.vote === 'hard';
        views[request.slot] = new BatchViews(request.buffers, ledger.shard, hard);
      }
      const slot = views[request.slot]!;
      if (request.words !== null) ledgers[request.ledger] = new Int32Array(request.words);
      ledger.begin(ledgers[request.ledger]!, request.cap);
      try {
        runShard(shard, ledger, request, slot, control, meanwhile);
      } catch (e) {
        // Shards stop at the same bad row; one that waits on this one must not wait for good.
        ledger.done(FAILED);
        error = failure(e);
      }
      // Combining leaves the shard as it is: its status goes out now, while another shard may still
      // train, rather than after the last chunk, when the main thread waits on it.
      writeStatus(status[request.slot]!, shard);
      // Batches are answered in order: the one before this is answered first.
      if (closed !== null) finish(closed);
      const batch: ClosedBatch = {
        request: taken,
        rows: request.rows,
        combiner: slot.combiner,
        words: ledger.close(request.rows, shard.rows),
        changes: changes.splice(0),
        steps: steps.splice(0),
        error,
      };
      closed = null;
      // The last shard through a batch leaves its chunks to the others, which are through it too and
      // combine them before they answer it — so combining falls to the shards that were faster.
      if (ledger.leave(batch.words) && ledger.shards > 1) answer(batch);
      else if (combineReady(ledger, batch)) answer(batch);
      // With the next batch out, this shard goes on with it rather than wait for the others here.
      else if (Atomics.load(control, C_REQUEST) > taken) closed = batch;
      else finish(batch);
    }
  }
}

function failure(e: unknown): NonNullable<ShardReply['error']> {
  return e instanceof ShoalError
    ? { code: e.code, message: e.message }
    : { code: 'worker-failure', message: `parallel bagging: a worker failed: ${String(e)}` };
}
