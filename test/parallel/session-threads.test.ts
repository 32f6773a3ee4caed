import { describe, expect, it } from 'vitest';
// Worker threads load compiled files, so the threads come from the build in dist/ (npm test builds first).
import { ParallelBagging, ShardPool } from '../../dist/parallel/index.js';
import type { ConfigError } from '../../src/core/index.js';
import type { EnsembleSnapshot } from '../../src/ensembles/index.js';
import type { JournalRecord } from '../../src/journal/index.js';
import {
  type EnsembleThreads,
  LearningSession,
  resolveConfig,
  type SessionSnapshot,
} from '../../src/pipeline/index.js';
import { buildStream, type StreamGenerator } from '../../src/streams/index.js';
import { frameOf, labelsFrame, manualClock, memoryJournal } from '../pipeline/session-support.js';

/**
 * A learning session with its ensemble on worker threads against the same session in one thread. The
 * stream is STAGGER (Schlimmer & Granger 1986; PUBLISHED.md) with abrupt changes a → b → c → a → b every
 * 1,600 rows, so members are replaced under the cap; a third of the rows have their label held back and
 * joined by id a batch later (late labels), the rest carry it inline. Everything the session writes
 * must be the same: scores, journal (lifecycle changes between windows, windows with each seat's
 * accuracy), snapshot.
 */
const ROWS = 8000;
const BATCH = 400;
const stream = (): StreamGenerator =>
  buildStream({ generator: 'stagger', concepts: 'a,b,c,a,b', every: 1600, seed: 5 });
const raw = (threads: number) => ({
  seed: 9,
  ensemble: { members: 6, threads, lifecycle: { maxReplacements: 1, replacementWindow: 1500 } },
  evaluation: { journalEvery: 250 },
});
const onThreads: EnsembleThreads = (snapshot: EnsembleSnapshot, threads: number) =>
  ParallelBagging.restore(snapshot, threads);
const hidden = (i: number): boolean => i % 3 === 1;
/** Of those, the labels that come before their batch is scored (held for their events). */
const early = (i: number): boolean => i % 9 === 4;

interface Run {
  readonly session: LearningSession;
  readonly records: JournalRecord[];
  readonly scores: number[];
}

function start(threads: number, workers = onThreads): Run {
  const journal = memoryJournal();
  const session = new LearningSession({
    config: resolveConfig(raw(threads), 'test'),
    source: 'stagger',
    journal,
    clock: manualClock(),
    version: '0.0.0-test',
    workers,
  });
  return { session, records: journal.records, scores: [] };
}

/** Batches `from` … `to` − 1 of the stream; async drives the session as replay and serve do. */
async function drive(
  run: Run,
  gen: StreamGenerator,
  from: number,
  to: number,
  async: boolean,
): Promise<void> {
  const s = run.session;
  for (let b = from; b < to; b++) {
    const frame = frameOf(gen, BATCH, { hide: hidden, ids: true, first: b * BATCH });
    const first: number[] = [];
    for (let r = BATCH - 1; r >= 0; r--) if (early(b * BATCH + r)) first.push(r);
    const before = labelsFrame(
      first.map((r) => `e${b * BATCH + r}`),
      first.map((r) => frame.truth[r]!),
    );
    if (async) await s.learnAsync(before, gen.classes);
    else s.learn(before, gen.classes);
    const out = async ? await s.scoreAsync(frame, gen.classes) : s.score(frame, gen.classes);
    for (let r = 0; r < out.rows; r++) {
      run.scores.push(
        out.probabilities[2 * r]!,
        out.predicted[r]!,
        out.agreement[r]!,
        out.voters[r]!,
        out.epoch[r]!,
      );
    }
    const ids: string[] = [];
    const labels: number[] = [];
    for (let r = 0; r < BATCH; r++) {
      if (hidden(b * BATCH + r) && !early(b * BATCH + r)) {
        ids.push(`e${b * BATCH + r}`);
        labels.push(frame.truth[r]!);
      }
    }
    if (async) await s.learnAsync(labelsFrame(ids, labels), gen.classes);
    else s.learn(labelsFrame(ids, labels), gen.classes);
  }
}

/** A snapshot without `config.threads`, the one thing threads change. */
function model(snapshot: SessionSnapshot): unknown {
  return { ...snapshot, config: { ...snapshot.config, threads: 0 } };
}

describe('a learning session on worker threads', () => {
  const gen = stream();
  const one = start(1);
  const batches = ROWS / BATCH;
  const ready = drive(one, gen, 0, batches, false);

  it('the reference run replaces members and writes windows', async () => {
    await ready;
    expect(
      one.records.filter((r) => r.type === 'lifecycle' && r.cause === 'promoted').length,
    ).toBeGreaterThan(2);
    expect(one.records.filter((r) => r.type === 'window').length).toBeGreaterThan(10);
    // The labels of rows 4, 13, 22, … (889 of 8,000) came before their events, were held and joined.
    expect(one.session.labelCounts()).toMatchObject({ early: 889, held: 0, unknown: 0, pending: 0 });
  });

  it('writes the scores, journal and snapshot of one thread over two threads', async () => {
    await ready;
    const two = start(2);
    try {
      await drive(two, stream(), 0, batches, true);
      expect(two.scores).toEqual(one.scores);
      expect(two.records).toEqual(one.records);
      expect(model(await two.session.snapshotAsync())).toEqual(model(one.session.snapshot()));
      expect(two.session.metrics.epoch).toBe(one.session.metrics.epoch);
      expect(two.session.seats()).toEqual(one.session.seats());
      expect(() => two.session.snapshot()).toThrow(/snapshotAsync/);
      const next = frameOf(stream(), 10, { ids: true });
      expect(() => two.session.score(next, ['0', '1'])).toThrow(/scoreAsync/);
      expect(() => two.session.learn(labelsFrame(['e0'], [1]), ['0', '1'])).toThrow(/learnAsync/);
    } finally {
      await two.session.close();
    }
  });

  it('restores a checkpoint of two threads on three, then on one, and ends as one thread (threads from a pool)', async () => {
    await ready;
    const g = stream();
    // As serve does: a session taken up again runs on the threads the one before gave back.
    const pool = new ShardPool();
    const pooled: EnsembleThreads = (snapshot, threads) => ParallelBagging.restore(snapshot, threads, pool);
    const two = start(2, pooled);
    let saved: SessionSnapshot;
    try {
      await drive(two, g, 0, 7, true);
      saved = JSON.parse(JSON.stringify(await two.session.snapshotAsync()));
    } finally {
      await two.session.close();
    }
    expect(pool.size, 'threads back in the pool').toBe(2);
    const options = (records: JournalRecord[]) => ({
      source: 'stagger',
      journal: { write: (r: JournalRecord) => records.push(r), flush: async () => {} },
      clock: manualClock(),
      version: '0.0.0-test',
      workers: pooled,
    });
    const three: Run = {
      session: LearningSession.restore(saved, { ...options(two.records), threads: 3 }),
      records: two.records,
      scores: two.scores,
    };
    try {
      await drive(three, g, 7, 15, true);
      expect(pool.size, 'the two threads taken again, one started').toBe(0);
      saved = JSON.parse(JSON.stringify(await three.session.snapshotAsync()));
    } finally {
      await three.session.close();
    }
    expect(pool.size).toBe(3);
    await pool.close();
    const last: Run = {
      session: LearningSession.restore(saved, { ...options(two.records), threads: 1 }),
      records: two.records,
      scores: two.scores,
    };
    await drive(last, g, 15, batches, false);
    expect(last.scores).toEqual(one.scores);
    expect(last.records).toEqual(one.records);
    expect(model(last.session.snapshot())).toEqual(model(one.session.snapshot()));
  });

  it('names ensemble.threads when it cannot be honoured', () => {
    const issue = (config: unknown) => {
      try {
        resolveConfig(config, 'test');
      } catch (e) {
        return (e as ConfigError).issues.map((i) => `${i.path}: ${i.code}`);
      }
      return [];
    };
    expect(issue({ ensemble: { threads: 0 } })).toEqual(['ensemble.threads: out-of-range']);
    expect(issue({ ensemble: { threads: 1.5 } })).toEqual(['ensemble.threads: not-an-integer']);
    expect(issue({ ensemble: { kind: 'boosting', threads: 2 } })).toEqual(['ensemble.threads: conflict']);
    expect(issue({ task: 'regression', ensemble: { threads: 2 } })).toEqual(['ensemble.threads: conflict']);
    expect(resolveConfig({ ensemble: { threads: 4 } }, 'test').threads).toBe(4);
    expect(resolveConfig({}, 'test').threads).toBe(1);
  });
});
