import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import type { LabelCounts, WindowRecord } from '../../src/journal/index.js';
import type { LearningSession } from '../../src/pipeline/index.js';
import type { PendingStore } from '../../src/pipeline/pending-store.js';
import { buildStream, rbf, type StreamGenerator } from '../../src/streams/index.js';
import { frameOf, labelsFrame, manualClock, restoreThroughJson, session } from './session-support.js';

/** Feed `rows` rows of a generator in batches of 500, labels inline unless hidden. */
function inline(s: LearningSession, gen: StreamGenerator, rows: number, hide?: (i: number) => boolean): void {
  for (let done = 0; done < rows; done += 500) {
    s.score(frameOf(gen, 500, { first: done, ...(hide ? { hide } : {}) }), gen.classes);
  }
}

/** Labels received = the outcomes they were counted under; predictions kept = their fates. */
function expectCountsAddUp(l: LabelCounts, received: number, kept: number): void {
  expect(l.joined + l.duplicate + l.late + l.evicted + l.unknown + l.held).toBe(received);
  expect(l.joined + l.expiredPredictions + l.evictedPredictions + l.pending).toBe(kept);
}

/**
 * Events with ids (`e<i>`) scored in batches of 500 without labels; the label of row i delivered once
 * `due[i]` rows have been scored (in order of due). The driver keeps the predictions served, in row
 * order, and may run a stream in parts, across sessions.
 */
class LateLabels {
  readonly served: Int32Array;
  readonly truth: Int32Array;
  private readonly due: readonly number[];
  private readonly order: number[];
  private next = 0;

  constructor(due: readonly number[]) {
    this.due = due;
    this.served = new Int32Array(due.length);
    this.truth = new Int32Array(due.length);
    this.order = due.map((_, i) => i).sort((a, b) => due[a]! - due[b]! || a - b);
  }

  run(s: LearningSession, gen: StreamGenerator, from: number, to: number): void {
    for (let done = from; done < to; done += 500) {
      const frame = frameOf(gen, 500, { first: done, ids: true, withLabels: false });
      this.truth.set(frame.truth, done);
      const scores = s.score(frame, gen.classes);
      for (let r = 0; r < scores.rows; r++) this.served[done + r] = scores.predicted[r]!;
      this.deliver(s, gen, s.scored);
    }
    if (to === this.due.length) this.deliver(s, gen, Number.POSITIVE_INFINITY);
  }

  private deliver(s: LearningSession, gen: StreamGenerator, scored: number): void {
    const ids: string[] = [];
    const labels: number[] = [];
    while (this.next < this.order.length && this.due[this.order[this.next]!]! <= scored) {
      const i = this.order[this.next++]!;
      ids.push(`e${i}`);
      labels.push(this.truth[i]!);
    }
    if (ids.length > 0) s.learn(labelsFrame(ids, labels), gen.classes);
  }
}

/** Labels of `rows` rows, each up to `most` rows late (seeded). */
function dues(rows: number, most: number, seed: number): number[] {
  const rng = new Rng(seed);
  return Array.from({ length: rows }, (_, i) => i + 1 + Math.floor(rng.next() * (most + 1)));
}

describe('the learning session', () => {
  it('journals the run, lifecycle changes, evaluation windows and a summary that agree with each other', () => {
    const { session: s, journal } = session({ evaluation: { journalEvery: 1000 } });
    const gen = () => buildStream({ generator: 'stagger', concepts: 'a,c', every: 3000, seed: 2 });
    inline(s, gen(), 6000);
    const summary = s.finish(gen().classes);
    const records = journal.records;
    expect(records[0]).toMatchObject({ type: 'run', source: 'test stream', shoal: '0.0.0-test', seed: '1' });
    const windows = records.filter((r): r is WindowRecord => r.type === 'window');
    expect(windows.map((w) => w.trained)).toEqual([1000, 2000, 3000, 4000, 5000, 6000]);
    const lifecycle = records.filter((r) => r.type === 'lifecycle');
    expect(summary.replacements).toBe(lifecycle.filter((r) => r.to === 'retired').length);
    expect(summary.warnings).toBe(lifecycle.filter((r) => r.cause === 'watched').length);
    expect(summary.replacements).toBeGreaterThan(0);
    const counts = s.metrics.lifecycleCounts();
    expect(counts.drift + counts.outperformed).toBe(summary.replacements);
    expect(records.at(-1)).toEqual(summary);
    expect(summary).toMatchObject({ rows: 6000, scored: 6000, trained: 6000 });
    expect(summary.labels.inline).toBe(6000);
    // Confusion matrix counts add up to the rows judged, and its diagonal to the accuracy.
    const total = summary.confusion.flat().reduce((a, b) => a + b, 0);
    const right = summary.confusion.reduce((a, row, i) => a + row[i]!, 0);
    expect(total).toBe(6000);
    expect(right / total).toBeCloseTo(summary.accuracy!, 12);
  });

  it('scores rows without a label but judges and trains only the labelled ones', () => {
    const { session: s } = session();
    inline(s, buildStream({ generator: 'sea', seed: 3 }), 3000, (i) => i % 3 === 0);
    expect(s.scored).toBe(3000);
    expect(s.judged).toBe(2000);
    expect(s.model!.rows).toBe(2000);
    expect(s.metrics.pendingSize).toBe(0);
  });

  it('writes an input-drift record when a feature’s distribution moves, before any label says so', () => {
    // Random RBF with moving centroids (Kirkby 2007; Bifet et al. KDD 2009): the features' distribution
    // drifts; with still centroids it does not.
    const run = (speed: number, monitor = true) => {
      const { session: s, journal } = session({ ensemble: { members: 2 }, inputs: { monitor } });
      const gen = rbf({ features: 4, centroids: 5, speed }, 4);
      inline(s, gen, 6000);
      return { summary: s.finish(gen.classes), records: journal.records, session: s };
    };
    const moving = run(0.002);
    const still = run(0);
    const drifts = moving.records.filter((r) => r.type === 'input-drift');
    expect(drifts.length).toBeGreaterThan(0);
    expect(drifts[0]).toMatchObject({ kind: 'numeric' });
    expect(moving.summary.inputDrifts).toBe(drifts.length);
    expect([...moving.session.metrics.inputDrifts().values()].reduce((a, b) => a + b, 0)).toBe(drifts.length);
    expect(still.summary.inputDrifts).toBeLessThan(drifts.length);
    expect(run(0.002, false).records.some((r) => r.type === 'input-drift')).toBe(false);
  });

  it('joins labels that arrive up to 5,000 rows late, shuffled: every one joined, the served prediction judged', () => {
    const rows = 20_000;
    const { session: s } = session({ ensemble: { members: 3 } });
    const gen = buildStream({ generator: 'sea', seed: 5 });
    const driver = new LateLabels(dues(rows, 5000, 11));
    driver.run(s, gen, 0, rows);
    const { served, truth } = driver;
    const summary = s.finish(gen.classes);
    expect(summary.labels).toMatchObject({
      joined: rows,
      unknown: 0,
      duplicate: 0,
      late: 0,
      evicted: 0,
      pending: 0,
    });
    expectCountsAddUp(summary.labels, rows, rows);
    expect(summary).toMatchObject({ scored: rows, trained: rows, rows });
    // The evaluation judged what was served at scoring time: its confusion matrix is the one counted
    // here from the served predictions, not from a re-score at label time.
    const counted = [
      [0, 0],
      [0, 0],
    ];
    for (let i = 0; i < rows; i++) counted[truth[i]!]![served[i]!]!++;
    expect(summary.confusion).toEqual(counted);
  });

  it('counts every label outcome: joined, duplicate, after eviction, after expiry, unknown', () => {
    const clock = manualClock();
    const { session: s } = session(
      { labels: { pending: 3, maxAgeSeconds: 10, early: 0 }, ensemble: { members: 2 } },
      clock,
    );
    const gen = buildStream({ generator: 'sea', seed: 1 });
    const score = (first: number, n: number) =>
      s.score(frameOf(gen, n, { first, ids: true, withLabels: false }), gen.classes);
    score(0, 3);
    score(3, 1); // e0 evicted to make room
    expect(s.metrics.pendingSize).toBe(3);
    const learn = (...ids: string[]) =>
      s.learn(
        labelsFrame(
          ids,
          ids.map(() => 1),
        ),
        gen.classes,
      );
    clock.wallNow += 5000;
    learn('e1', 'e1', 'e0', 'nobody');
    // One label joined 5 s after its prediction was served: the (1 s, 10 s] bucket.
    expect(s.metrics.labelDelays()).toMatchObject({ counts: [0, 1, 0, 0, 0, 0, 0, 0, 0], sum: 5 });
    expect(s.labelCounts()).toMatchObject({
      joined: 1,
      duplicate: 1,
      evicted: 1,
      unknown: 1,
      evictedPredictions: 1,
    });
    clock.wallNow += 6000;
    expect(s.expire()).toBe(2); // e2 and e3, served 11 s ago
    learn('e2');
    const counts = s.labelCounts();
    expect(counts).toMatchObject({ late: 1, expiredPredictions: 2, pending: 0 });
    expectCountsAddUp(counts, 5, 4);
    expect(s.learn(labelsFrame(['e9'], [Number.NaN]), gen.classes)).toBe(1);
    // A row that came with its label was judged at once: a later label for its id is a duplicate.
    s.score(frameOf(gen, 1, { first: 50, ids: true }), gen.classes);
    learn('e50');
    expect(s.labelCounts()).toMatchObject({ inline: 1, duplicate: 2 });
  });

  it('with no late-label source (lateLabels false), keeps nothing of rows labelled inline: the same model, a small snapshot', () => {
    const [remembers, forgets] = [true, false].map(
      (late) => session({ ensemble: { members: 2 }, labels: { early: 0 } }, manualClock(), late).session,
    );
    for (const s of [remembers!, forgets!]) {
      const gen = buildStream({ generator: 'sea', seed: 4 });
      s.score(frameOf(gen, 2_000, { ids: true }), gen.classes);
    }
    const [kept, none] = [remembers!, forgets!].map((s) => s.snapshot());
    expect(none!.ensemble).toEqual(kept!.ensemble);
    expect(none!.evaluator).toEqual(kept!.evaluator);
    expect(JSON.stringify(none!.pending).length * 10).toBeLessThan(JSON.stringify(kept!.pending).length);
    // A label that comes anyway finds nothing: unknown, where the remembering session says duplicate.
    const classes = buildStream({ generator: 'sea', seed: 4 }).classes;
    for (const s of [remembers!, forgets!]) s.learn(labelsFrame(['e5'], [0]), classes);
    expect(remembers!.labelCounts()).toMatchObject({ duplicate: 1, unknown: 0 });
    expect(forgets!.labelCounts()).toMatchObject({ duplicate: 0, unknown: 1 });
  });

  it('keeps its bound under a flood of 10× its capacity in unknown labels and in predictions', () => {
    const cap = 1000;
    const { session: s } = session({
      labels: { pending: cap, maxAgeSeconds: null, early: 0 },
      ensemble: { members: 2 },
    });
    const gen = buildStream({ generator: 'sea', seed: 2 });
    s.score(frameOf(gen, cap, { ids: true, withLabels: false }), gen.classes);
    const flood = Array.from({ length: 10 * cap }, (_, i) => `x${i}`);
    s.learn(
      labelsFrame(
        flood,
        flood.map(() => 0),
      ),
      gen.classes,
    );
    expect(s.metrics.pendingSize).toBe(cap);
    expect(s.labelCounts()).toMatchObject({ unknown: 10 * cap, joined: 0 });
    // Ten times the capacity in new predictions: the oldest are evicted, the bound holds.
    for (let k = 1; k <= 10; k++)
      s.score(frameOf(gen, cap, { ids: true, withLabels: false, first: k * cap }), gen.classes);
    expect(s.metrics.pendingSize).toBe(cap);
    const store = (s as unknown as { pending: PendingStore }).pending;
    const maps = store as unknown as { index: Map<string, number>; gone: Map<string, number> };
    expect(maps.index.size).toBeLessThanOrEqual(cap);
    expect(maps.gone.size).toBeLessThanOrEqual(cap);
    // Labels for all 11,000: the last 1,000 join, the 1,000 most recently evicted are known as such,
    // the older ones are beyond the store's memory and count as unknown.
    const all = Array.from({ length: 11 * cap }, (_, i) => `e${i}`);
    s.learn(
      labelsFrame(
        all,
        all.map(() => 1),
      ),
      gen.classes,
    );
    const counts = s.labelCounts();
    expect(counts).toMatchObject({
      joined: cap,
      evicted: cap,
      unknown: 10 * cap + 9 * cap,
      evictedPredictions: 10 * cap,
    });
    expectCountsAddUp(counts, 10 * cap + 11 * cap, 11 * cap);
    expect(maps.gone.size).toBeLessThanOrEqual(cap);
  });

  it('trains an unmatched label on its own row only under the train policy', () => {
    for (const unmatched of ['ignore', 'train'] as const) {
      const { session: s } = session({ labels: { unmatched }, ensemble: { members: 2 } });
      const gen = buildStream({ generator: 'sea', seed: 4 });
      s.score(frameOf(gen, 10, { ids: true, withLabels: false }), gen.classes);
      const carried = { ...frameOf(gen, 5, { ids: true, first: 100 }) };
      s.learn(carried, gen.classes);
      // Under train, a label that carries its row is trained on at once; else it is held for its event.
      expect(s.labelCounts()).toMatchObject(
        unmatched === 'train' ? { unknown: 5, held: 0 } : { unknown: 0, held: 5, early: 5 },
      );
      expect(s.labelCounts().trainedUnmatched).toBe(unmatched === 'train' ? 5 : 0);
      expect(s.model!.rows).toBe(unmatched === 'train' ? 5 : 0);
    }
  });

  it('restores from a JSON snapshot and goes on exactly as the uninterrupted run', () => {
    const rows = 6000;
    const due = dues(rows, 800, 3);
    const raw = { ensemble: { kind: 'boosting', members: 3 }, evaluation: { journalEvery: 500 } };
    const gen = () => buildStream({ generator: 'agrawal', concepts: '1,2', every: 3000, seed: 8 });
    const whole = session(raw);
    new LateLabels(due).run(whole.session, gen(), 0, rows);
    // The same run stopped half way with labels still pending, snapshotted through JSON text, restored
    // and fed the rest.
    const first = session(raw);
    const g = gen();
    const driver = new LateLabels(due);
    driver.run(first.session, g, 0, rows / 2);
    expect(first.session.metrics.pendingSize).toBeGreaterThan(0);
    const { text, journal, restored } = restoreThroughJson(first.session);
    expect(JSON.stringify(restored.snapshot())).toBe(text);
    driver.run(restored, g, rows / 2, rows);
    expect(JSON.stringify(restored.snapshot())).toBe(JSON.stringify(whole.session.snapshot()));
    // The journal goes on where it stopped: the records after the snapshot are the same.
    const after = whole.journal.records.slice(first.journal.records.length);
    expect(journal.records).toEqual(after);
  });

  it('is deterministic: the same seed gives the same snapshot, another seed another', () => {
    const run = (seed: number) => {
      const { session: s } = session({ seed, ensemble: { kind: 'stacking' } });
      inline(s, buildStream({ generator: 'sea', seed: 9 }), 2000);
      return JSON.stringify(s.snapshot());
    };
    expect(run(1)).toBe(run(1));
    expect(run(1)).not.toBe(run(2));
  });
});
