import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import type { JournalRecord, LabelCounts } from '../../src/journal/index.js';
import {
  ALREADY_HELD,
  EarlyLabels,
  type EarlyLabelsSnapshot,
  HELD,
  HELD_PUSHED_OUT,
} from '../../src/pipeline/early-labels.js';
import type { LearningSession, SessionSnapshot } from '../../src/pipeline/index.js';
import { buildStream, type StreamGenerator } from '../../src/streams/index.js';
import { frameOf, labelsFrame, manualClock, restoreThroughJson, session } from './session-support.js';

const roundTrip = (early: EarlyLabels): EarlyLabels =>
  EarlyLabels.restore(JSON.parse(JSON.stringify(early.snapshot())) as EarlyLabelsSnapshot);

describe('labels held for their events', () => {
  it('holds at most its capacity: the oldest label is pushed out, a second label for a held id is refused', () => {
    const early = new EarlyLabels(3);
    expect([early.hold('a', 0, 1), early.hold('b', 1, 2), early.hold('c', 0, 3)]).toEqual([HELD, HELD, HELD]);
    expect(early.hold('b', 0, 4)).toBe(ALREADY_HELD);
    expect(early.hold('d', 1, 5)).toBe(HELD_PUSHED_OUT);
    expect(early.size).toBe(3);
    expect(early.claim('a')).toBe(false);
    expect(early.claim('c')).toBe(true);
    expect(early.claim('b')).toBe(true);
    // Claimed in the order their events were scored, with the label first held for each id.
    const ready = early.ready()!;
    expect(ready.ids).toEqual(['c', 'b']);
    expect(Array.from(ready.labels!.subarray(0, 2))).toEqual([0, 1]);
    early.clearReady();
    expect(early.ready()).toBeNull();
    expect(early.size).toBe(1);
  });

  it('lets labels go by age, oldest first, and restores exactly: the same order, the same next to go', () => {
    const early = new EarlyLabels(4);
    for (const [k, id] of ['a', 'b', 'c', 'd'].entries()) early.hold(id, k % 2, 1000 * k);
    early.claim('b');
    early.clearReady();
    expect(early.expire(1000)).toBe(1); // a (held at 0); b was claimed; c (2000) is young enough
    const back = roundTrip(early);
    expect(JSON.stringify(back.snapshot())).toBe(JSON.stringify(early.snapshot()));
    for (const store of [early, back]) {
      store.hold('e', 1, 4000);
      store.hold('f', 0, 5000);
      expect(store.hold('g', 1, 6000)).toBe(HELD_PUSHED_OUT); // c, the oldest, goes
      expect(store.claim('c')).toBe(false);
      expect(store.expire(5500)).toBe(3); // d, e, f
    }
    expect(JSON.stringify(back.snapshot())).toBe(JSON.stringify(early.snapshot()));
  });

  it('refuses a snapshot that does not add up, naming what is wrong', () => {
    const good = (() => {
      const e = new EarlyLabels(2);
      e.hold('a', 1, 0);
      return e.snapshot();
    })();
    expect(() => EarlyLabels.restore({ ...good, ids: ['a', 'a'] })).toThrow(
      /early labels snapshot: 2 ids, but 1 labels/,
    );
    expect(() => EarlyLabels.restore({ ...good, capacity: 0 })).toThrow(/above the capacity 0/);
    expect(() => new EarlyLabels(-1)).toThrow(/capacity must be an integer ≥ 0/);
  });
});

/** A session's labels, without the count of those that came early (which differs by design). */
function withoutEarly(l: LabelCounts): Omit<LabelCounts, 'early'> {
  const { early: _early, ...rest } = l;
  return rest;
}

function recordsWithoutEarly(records: readonly JournalRecord[]): unknown[] {
  return records.map((r) =>
    r.type === 'window' || r.type === 'summary' ? { ...r, labels: withoutEarly(r.labels) } : r,
  );
}

function snapshotWithoutEarly(s: SessionSnapshot): unknown {
  const { early: _early, ...counts } = s.counts;
  return { ...s, counts };
}

const BATCH = 250;
const ROWS = 6000;
const raw = { seed: 3, ensemble: { members: 4 }, evaluation: { journalEvery: 400 } };
const gen = (): StreamGenerator => buildStream({ generator: 'sea', concepts: '1,2', every: 3000, seed: 6 });

interface Run {
  readonly session: LearningSession;
  readonly records: JournalRecord[];
  readonly scores: number[];
}

/**
 * Batches `from` … `to` − 1 of the stream, every row with an id and no label. Row i's label comes
 * before its batch is scored when `early(i)` (the labels of a batch that come early arrive shuffled),
 * else right after the batch, in row order. With `reference`, the labels that would have come early
 * come right after the batch instead, in row order, before the others.
 */
function drive(
  run: Run,
  g: StreamGenerator,
  from: number,
  to: number,
  early: (i: number) => boolean,
  reference = false,
): void {
  const rng = new Rng(from + 17);
  for (let b = from; b < to; b++) {
    const frame = frameOf(g, BATCH, { ids: true, withLabels: false, first: b * BATCH });
    const rows = Array.from({ length: BATCH }, (_, r) => b * BATCH + r);
    const before = rows.filter(early);
    for (let k = before.length - 1; k > 0; k--) {
      const j = Math.floor(rng.next() * (k + 1));
      [before[k], before[j]] = [before[j]!, before[k]!];
    }
    const label = (i: number) => frame.truth[i - b * BATCH]!;
    const learn = (ids: number[]) => {
      if (ids.length > 0)
        run.session.learn(
          labelsFrame(
            ids.map((i) => `e${i}`),
            ids.map(label),
          ),
          g.classes,
        );
    };
    if (!reference) learn(before);
    const out = run.session.score(frame, g.classes);
    for (let r = 0; r < out.rows; r++) run.scores.push(out.predicted[r]!, out.probabilities[2 * r]!);
    if (reference) learn(rows.filter(early));
    learn(rows.filter((i) => !early(i)));
  }
}

function start(config: unknown = raw): Run {
  const { session: s, journal } = session(config);
  return { session: s, records: journal.records, scores: [] };
}

describe('a session given labels before their events', () => {
  const someEarly = (i: number): boolean => (i * 2654435761) % 7 < 3;

  it('joins each when its event is scored, bit for bit as if it had come right after the batch', () => {
    const ahead = start();
    const after = start();
    const g1 = gen();
    const g2 = gen();
    drive(ahead, g1, 0, ROWS / BATCH, someEarly);
    // The reference: the labels that came early in `ahead` come right after their batch, in row order,
    // before the others.
    drive(after, g2, 0, ROWS / BATCH, someEarly, true);
    const counts = ahead.session.labelCounts();
    expect(counts.early).toBeGreaterThan(ROWS / 3);
    expect(counts).toMatchObject({ joined: ROWS, unknown: 0, held: 0, duplicate: 0, pending: 0 });
    expect(ahead.scores).toEqual(after.scores);
    expect(recordsWithoutEarly(ahead.records)).toEqual(recordsWithoutEarly(after.records));
    expect(JSON.stringify(snapshotWithoutEarly(ahead.session.snapshot()))).toBe(
      JSON.stringify(snapshotWithoutEarly(after.session.snapshot())),
    );
    expect(ahead.session.model!.rows).toBe(ROWS);
    expect(after.session.labelCounts().early).toBe(0);
  });

  it('keeps held labels across a snapshot and restore, and goes on exactly as the uninterrupted run', () => {
    const first = start();
    const g = gen();
    const half = ROWS / BATCH / 2;
    drive(first, g, 0, half, someEarly);
    // The next batch's early labels arrive, then the session stops while they wait for their events.
    const frame = frameOf(g, BATCH, { ids: true, withLabels: false, first: half * BATCH });
    const ids = Array.from({ length: BATCH }, (_, r) => `e${half * BATCH + r}`);
    first.session.learn(labelsFrame(ids, frame.truth), g.classes);
    expect(first.session.labelCounts().held).toBe(BATCH);
    const { text, journal, restored } = restoreThroughJson(first.session);
    expect(JSON.stringify(restored.snapshot())).toBe(text);
    // The uninterrupted run, told the same: all of that batch's labels early, then the batch.
    const wholeAgain = start();
    const g2 = gen();
    drive(wholeAgain, g2, 0, half, someEarly);
    drive(wholeAgain, g2, half, half + 1, () => true);
    drive(wholeAgain, g2, half + 1, ROWS / BATCH, someEarly);
    restored.score(frame, g.classes);
    drive({ session: restored, records: journal.records, scores: [] }, g, half + 1, ROWS / BATCH, someEarly);
    expect(restored.labelCounts()).toMatchObject({ joined: ROWS, held: 0, unknown: 0 });
    expect(JSON.stringify(restored.snapshot())).toBe(JSON.stringify(wholeAgain.session.snapshot()));
  });

  it('counts a held label unknown when its event does not come in time, or when newer labels push it out', () => {
    const clock = manualClock();
    const { session: s } = session(
      { labels: { early: 2, earlyWaitSeconds: 10 }, ensemble: { members: 2 } },
      clock,
    );
    const g = gen();
    s.learn(labelsFrame(['e0', 'e1', 'e2'], [0, 1, 0]), g.classes);
    // Three labels for two places: e0's is pushed out.
    expect(s.labelCounts()).toMatchObject({ early: 3, held: 2, unknown: 1 });
    clock.wallNow += 10_001;
    s.score(frameOf(g, 3, { ids: true, withLabels: false }), g.classes);
    // Past the wait, e1's and e2's labels were let go before their events were scored.
    expect(s.labelCounts()).toMatchObject({ early: 3, held: 0, unknown: 3, joined: 0, pending: 3 });
    // A label whose event came with a label of its own is a second label for that id.
    s.learn(labelsFrame(['e3', 'e3'], [1, 1]), g.classes);
    expect(s.labelCounts()).toMatchObject({ early: 4, held: 1, duplicate: 1 });
    s.score(frameOf(g, 1, { ids: true, first: 3 }), g.classes);
    expect(s.labelCounts()).toMatchObject({ held: 0, duplicate: 2, inline: 1, joined: 0 });
  });

  it('with labels.early 0, holds nothing: a label that comes first counts as unknown at once', () => {
    const { session: s } = session({ labels: { early: 0 }, ensemble: { members: 2 } });
    const g = gen();
    s.learn(labelsFrame(['e0'], [1]), g.classes);
    s.score(frameOf(g, 1, { ids: true, withLabels: false }), g.classes);
    expect(s.labelCounts()).toMatchObject({ early: 0, held: 0, unknown: 1, pending: 1 });
  });
});
