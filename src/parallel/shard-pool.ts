import { Worker } from 'node:worker_threads';
import { ShoalError } from '../core/index.js';

/** A worker thread that hosts one shard at a time (see `ShardPool`). */
export interface ShardThread {
  readonly worker: Worker;
  /** Why the thread stopped, once it has. */
  lost: string | null;
}

/**
 * Worker threads kept between parallel ensembles: an ensemble started or restored on a pool takes idle
 * threads from it (starting more when there are too few) and gives them back when it closes, so the
 * next one — a session taken up again from its checkpoint after a rebalance, say — runs on threads
 * whose code V8 has already compiled and tuned. A new thread starts with a cold compiler: over the
 * first few hundred thousand rows its shard runs markedly slower than a warm one (DEVELOPERS.md,
 * *Parallel members*). A thread that stopped (an error, an exit) never goes back to the pool.
 *
 * @example
 * const pool = new ShardPool();
 * const bag = await ParallelBagging.restore(snapshot, 2, pool);
 * await bag.close(); // its two threads wait in the pool, warm
 * const again = await ParallelBagging.restore(await checkpointed(), 2, pool); // on the same threads
 * await again.close();
 * await pool.close();
 */
export class ShardPool {
  private readonly idle: ShardThread[] = [];
  private closed = false;

  /** Threads waiting for a shard. */
  get size(): number {
    return this.idle.length;
  }

  /** An idle thread that is still running, or a new one. */
  take(): ShardThread {
    if (this.closed)
      throw new ShoalError('invalid-parameter', 'shard pool: closed, it hands out no more threads');
    for (let thread = this.idle.pop(); thread !== undefined; thread = this.idle.pop()) {
      if (thread.lost === null) return thread;
    }
    return startThread();
  }

  /** Take a thread back once its shard has been told to stop (ended when it stopped, or when the pool is closed). */
  give(thread: ShardThread): void {
    if (thread.lost !== null) return;
    if (this.closed) void thread.worker.terminate();
    else this.idle.push(thread);
  }

  /** End the idle threads; threads given back later end then. */
  async close(): Promise<void> {
    this.closed = true;
    await Promise.all(this.idle.splice(0).map((t) => t.worker.terminate()));
  }
}

/**
 * Start a thread for shards. It loads `bagging-worker.js` and waits for a shard to host, so it holds
 * nothing until a `ParallelBagging` sends it one; an idle thread does not keep the process alive.
 */
export function startThread(): ShardThread {
  // Started from a string that imports the entry file: a worker started from a file refuses the
  // caller's --input-type (set by `node --input-type=module -e …`), which it inherits.
  const entry = JSON.stringify(new URL('./bagging-worker.js', import.meta.url).href);
  const worker = new Worker(`import(${entry})`, { eval: true });
  const thread: ShardThread = { worker, lost: null };
  worker.on('error', (e) => {
    thread.lost ??= e instanceof Error ? e.message : String(e);
  });
  worker.on('exit', (code) => {
    thread.lost ??= `exited with code ${code}`;
  });
  worker.unref();
  return thread;
}
