import { describe, expect, it } from 'vitest';
// Worker threads load compiled files, so this test uses the build in dist/ (npm test builds first).
import {
  Bagging,
  type BaggingSpec,
  BatchVerdicts,
  type EnsembleSnapshot,
  Verdict,
} from '../../dist/ensembles/index.js';
import type { LifecycleChange } from '../../dist/journal/index.js';
import { ParallelBagging, ShardPool } from '../../dist/parallel/index.js';
import { type ShardThread, startThread } from '../../dist/parallel/shard-pool.js';
import { buildStream } from '../../src/streams/index.js';

/**
 * Members on worker threads with the member lifecycle on. The stream is STAGGER (Schlimmer & Granger
 * 1986; PUBLISHED.md) with abrupt changes of concept a → b → c → a → b every 1,600 rows, so seats are put
 * on trial and replaced, under a cap of one replacement per 1,500 rows. Every tenth row comes without
 * its label (scored only). One thread is the reference: the same verdicts bit for bit, the same
 * lifecycle changes in the same order, the same snapshot.
 */
const ROWS = 8000;
const BATCH = 500;
const WINDOW = 1500;
const MEMBERS = 7;
const SPEC: BaggingSpec = { members: MEMBERS, lifecycle: { maxReplacements: 1, replacementWindow: WINDOW } };
const stream = () => buildStream({ generator: 'stagger', concepts: 'a,b,c,a,b', every: 1600, seed: 5 });

function data(): { rows: Float64Array; labels: Float64Array; width: number } {
  const gen = stream();
  const width = gen.schema.features.length;
  const rows = new Float64Array(ROWS * width);
  const labels = new Float64Array(ROWS);
  for (let i = 0; i < ROWS; i++) labels[i] = i % 10 === 9 ? Number.NaN : gen.next(rows, i * width);
  return { rows, labels, width };
}

const { rows, labels, width } = data();
const schema = stream().schema;

/** Everything a verdict says, as numbers (each seat's recent accuracy follows it). */
function push(trace: number[], v: Verdict): void {
  for (let k = 0; k < v.classes; k++) trace.push(v.probabilities[k]!);
  trace.push(v.classes, v.predicted, v.agreement, v.voters, v.epoch);
}

/** One thread, rows `from` … `to` − 1. */
function single(bag: Bagging, from: number, to: number, trace: number[]): void {
  const verdict = new Verdict();
  for (let i = from; i < to; i++) {
    if (Number.isNaN(labels[i]!)) bag.score(rows, i * width, verdict);
    else bag.scoreTrain(rows, i * width, labels[i]!, verdict);
    push(trace, verdict);
    for (let m = 0; m < MEMBERS; m++) trace.push(bag.recentAccuracy(m));
  }
}

/**
 * Threads, rows `from` … `to` − 1 in batches of `sizes` rows (cycled), `out` batches out at a time: each
 * batch is sent before the answers of the `out` − 1 before it are read.
 */
async function threaded(
  bag: ParallelBagging,
  from: number,
  to: number,
  trace: number[],
  records: LifecycleChange[],
  sizes: readonly number[] = [BATCH],
  out = 1,
): Promise<void> {
  const verdict = new Verdict();
  const take = (out: BatchVerdicts, n: number): void => {
    records.push(...out.changes);
    for (let r = 0; r < n; r++) {
      out.verdictAt(r, verdict);
      push(trace, verdict);
      for (let m = 0; m < MEMBERS; m++) trace.push(out.accuracy[r * MEMBERS + m]!);
    }
  };
  const sent: { done: Promise<void>; verdicts: BatchVerdicts; rows: number }[] = [];
  const read = async (): Promise<void> => {
    const first = sent.shift()!;
    await first.done;
    take(first.verdicts, first.rows);
  };
  for (let s = from, k = 0, n = 0; s < to; s += n, k++) {
    n = Math.min(sizes[k % sizes.length]!, to - s);
    if (sent.length === out) await read();
    const verdicts = new BatchVerdicts();
    sent.push({
      done: bag.scoreTrainBatch(rows.subarray(s * width), labels.subarray(s), n, verdicts),
      verdicts,
      rows: n,
    });
  }
  while (sent.length > 0) await read();
}

function firstDifference(a: number[], b: number[]): number {
  if (a.length !== b.length) return Math.min(a.length, b.length);
  return a.findIndex((x, i) => !Object.is(x, b[i]));
}

describe('parallel bagging with the member lifecycle', () => {
  const records: LifecycleChange[] = [];
  const bag = new Bagging(schema, SPEC, 'life', (c) => records.push(c));
  const trace: number[] = [];
  single(bag, 0, ROWS, trace);
  const snapshot = JSON.stringify(bag.snapshot());

  it('replaces members on this stream, no two within the window of the cap', () => {
    const promoted = records.filter((r) => r.cause === 'promoted').map((r) => r.trained);
    expect(promoted.length).toBeGreaterThan(2);
    for (let i = 1; i < promoted.length; i++)
      expect(promoted[i]! - promoted[i - 1]!).toBeGreaterThanOrEqual(WINDOW);
  });

  const changing = [1, 130, 64, 700, 65, 2, 1200, 333];
  it.each([
    { threads: 2, sizes: [BATCH], out: 1, how: `batches of ${BATCH}` },
    { threads: 3, sizes: [BATCH], out: 1, how: `batches of ${BATCH}` },
    // Shared buffers grow and go out again.
    { threads: 3, sizes: changing, out: 1, how: 'batches of changing sizes' },
    { threads: 2, sizes: changing, out: 2, how: 'batches of changing sizes, two out at a time' },
    { threads: 3, sizes: changing, out: 2, how: 'batches of changing sizes, two out at a time' },
    { threads: 2, sizes: changing, out: 3, how: 'batches of changing sizes, three out at a time' },
    { threads: 3, sizes: [BATCH], out: 3, how: `batches of ${BATCH}, three out at a time` },
  ])(
    'over $threads threads, in $how, gives the verdicts, lifecycle changes, seats and snapshot of one thread',
    async ({ threads, sizes, out }) => {
      const got: LifecycleChange[] = [];
      const parallel = await ParallelBagging.start(schema, SPEC, 'life', threads, (c) => got.push(c));
      try {
        const t: number[] = [];
        await threaded(parallel, 0, ROWS, t, got, sizes, out);
        expect(firstDifference(t, trace), 'first differing verdict value').toBe(-1);
        expect(got).toEqual(records);
        expect(parallel.epoch).toBe(bag.epoch);
        expect(parallel.rows).toBe(bag.rows);
        expect(parallel.seats()).toEqual(bag.seats());
        expect(JSON.stringify(await parallel.snapshot())).toBe(snapshot);
      } finally {
        await parallel.close();
      }
    },
  );

  it('restores a snapshot across thread counts (one → three → two → one) and ends as one thread', async () => {
    const cuts = [2300, 4700, 6100];
    const first = new Bagging(schema, SPEC, 'life');
    const t: number[] = [];
    single(first, 0, cuts[0]!, t);
    const three = await ParallelBagging.restore(JSON.parse(JSON.stringify(first.snapshot())), 3);
    let saved: EnsembleSnapshot;
    try {
      await threaded(three, cuts[0]!, cuts[1]!, t, []);
      saved = JSON.parse(JSON.stringify(await three.snapshot()));
    } finally {
      await three.close();
    }
    const two = await ParallelBagging.restore(saved, 2);
    try {
      await threaded(two, cuts[1]!, cuts[2]!, t, []);
      saved = JSON.parse(JSON.stringify(await two.snapshot()));
    } finally {
      await two.close();
    }
    const last = Bagging.restore(saved);
    single(last, cuts[2]!, ROWS, t);
    expect(firstDifference(t, trace), 'first differing verdict value').toBe(-1);
    expect(JSON.stringify(last.snapshot())).toBe(snapshot);
  });

  it('hosts one ensemble after another on the same pooled threads (three → two → three) with the results of one thread', async () => {
    // A thread that hosted shard 2 of three hosts shard 1 of two next: nothing of the first may leak.
    const cuts = [2100, 4300, 6500];
    const first = new Bagging(schema, SPEC, 'life');
    const t: number[] = [];
    single(first, 0, cuts[0]!, t);
    const pool = new ShardPool();
    let saved: EnsembleSnapshot = JSON.parse(JSON.stringify(first.snapshot()));
    try {
      for (const [k, threads] of [3, 2, 3].entries()) {
        const bag = await ParallelBagging.restore(saved, threads, pool);
        expect(pool.size, 'threads left idle').toBe(3 - threads);
        try {
          await threaded(bag, cuts[k]!, cuts[k + 1] ?? ROWS, t, [], [BATCH], 3);
          saved = JSON.parse(JSON.stringify(await bag.snapshot()));
        } finally {
          await bag.close();
        }
        // The pool never grows past the three threads the first ensemble needed.
        expect(pool.size, 'threads back in the pool').toBe(3);
      }
    } finally {
      await pool.close();
    }
    expect(pool.size).toBe(0);
    expect(firstDifference(t, trace), 'first differing verdict value').toBe(-1);
    expect(JSON.stringify(saved)).toBe(snapshot);
  });

  it('closes after the batches still out, its threads back in the pool idle for the next ensemble', async () => {
    const pool = new ShardPool();
    try {
      const bag = await ParallelBagging.start(schema, SPEC, 'life', 2, () => {}, pool);
      const out = Array.from({ length: 3 }, () => new BatchVerdicts());
      const sent = out.map((verdicts, k) =>
        bag.scoreTrainBatch(rows.subarray(k * BATCH * width), labels.subarray(k * BATCH), BATCH, verdicts),
      );
      let answered = 0;
      for (const done of sent) void done.then(() => answered++);
      await bag.close();
      expect(answered, 'batches in before close resolved').toBe(3);
      expect(pool.size).toBe(2);
      // The batches were answered in full before the threads went back (members independent: Oza &
      // Russell 2001, so the verdicts are one thread's).
      const t: number[] = [];
      const verdict = new Verdict();
      for (const verdicts of out) {
        for (let r = 0; r < BATCH; r++) {
          verdicts.verdictAt(r, verdict);
          push(t, verdict);
          for (let m = 0; m < MEMBERS; m++) t.push(verdicts.accuracy[r * MEMBERS + m]!);
        }
      }
      expect(firstDifference(t, trace.slice(0, t.length)), 'first differing verdict value').toBe(-1);
      const next = await ParallelBagging.restore(JSON.parse(snapshot), 2, pool);
      expect(pool.size).toBe(0);
      try {
        const u: number[] = [];
        await threaded(next, 0, BATCH, u, []);
        expect(u.length).toBeGreaterThan(0);
      } finally {
        await next.close();
      }
    } finally {
      await pool.close();
    }
  });

  it('ends the threads it took when a shard does not start, and a closed pool hands out none', async () => {
    const dead = startThread();
    await dead.worker.terminate();
    await new Promise((resolve) => setImmediate(resolve));
    const live: ShardThread[] = [];
    // A pool whose first thread stops after it is handed out (between take and host); the second runs.
    let taken = 0;
    class Failing extends ShardPool {
      override take(): ShardThread {
        if (taken++ === 0) return dead;
        const thread = super.take();
        live.push(thread);
        return thread;
      }
    }
    const pool = new Failing();
    await expect(ParallelBagging.restore(JSON.parse(snapshot), 2, pool)).rejects.toMatchObject({
      code: 'worker-failure',
      message: expect.stringMatching(/did not start: exited with code/),
    });
    await new Promise((resolve) => setImmediate(resolve));
    expect(live[0]!.lost, 'the thread that started a shard is ended').toMatch(/exited with code/);
    await pool.close();
    expect(() => pool.take()).toThrow(/shard pool: closed/);
  });

  it('does not take back a pooled thread that stopped, and starts another in its place', async () => {
    const pool = new ShardPool();
    try {
      const thread = pool.take();
      await thread.worker.terminate();
      await new Promise((resolve) => setImmediate(resolve));
      expect(thread.lost).toMatch(/exited with code/);
      pool.give(thread);
      expect(pool.size).toBe(0);
      const bag = await ParallelBagging.restore(JSON.parse(snapshot), 2, pool);
      try {
        const t: number[] = [];
        await threaded(bag, 0, 1000, t, []);
        expect(t.length).toBeGreaterThan(0);
      } finally {
        await bag.close();
      }
      expect(pool.size).toBe(2);
    } finally {
      await pool.close();
    }
  });

  it('keeps this thread free while the workers train: the event loop turns during a batch', async () => {
    const parallel = await ParallelBagging.start(schema, { members: 10 }, 'loop', 2);
    try {
      let turns = 0;
      let going = true;
      const turn = (): void => {
        turns++;
        if (going) setImmediate(turn);
      };
      setImmediate(turn);
      const out = new BatchVerdicts();
      await parallel.scoreTrainBatch(
        rows,
        labels.map((l) => (Number.isNaN(l) ? 0 : l)),
        ROWS,
        out,
      );
      going = false;
      // A thread blocked until the batch is in would have turned its loop once or not at all.
      expect(turns).toBeGreaterThan(10);
    } finally {
      await parallel.close();
    }
  });
});
