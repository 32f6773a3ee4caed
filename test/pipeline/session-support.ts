import type { Frame } from '../../src/frames/index.js';
import type { JournalRecord } from '../../src/journal/index.js';
import {
  type Clock,
  type JournalSink,
  LearningSession,
  resolveConfig,
  type SessionSnapshot,
} from '../../src/pipeline/index.js';
import { type StreamGenerator, take } from '../../src/streams/index.js';

/** A journal kept in memory. */
export function memoryJournal(): JournalSink & { readonly records: JournalRecord[] } {
  const records: JournalRecord[] = [];
  return { records, write: (r) => records.push(r), flush: async () => {} };
}

/** A clock the test moves by hand: each read of `monotonic` advances it by 1 ms. */
export function manualClock(start = Date.UTC(2026, 11, 1)): Clock & { wallNow: number } {
  let t = 0;
  const clock = {
    wallNow: start,
    monotonic: () => (t += 1),
    wall: () => clock.wallNow,
    // Live serving: the session's time is the wall clock.
    event: () => clock.wallNow,
  };
  return clock;
}

export function session(raw: unknown = {}, clock: Clock = manualClock(), lateLabels = true) {
  const journal = memoryJournal();
  const s = new LearningSession({
    config: resolveConfig(raw, 'test'),
    source: 'test stream',
    journal,
    clock,
    version: '0.0.0-test',
    lateLabels,
  });
  return { session: s, journal, clock };
}

/**
 * A session's snapshot as JSON text, and a session restored from it that writes to a fresh journal: a
 * stop and a restart, through what a checkpoint holds.
 */
export function restoreThroughJson(s: LearningSession) {
  const text = JSON.stringify(s.snapshot());
  const journal = memoryJournal();
  const restored = LearningSession.restore(JSON.parse(text) as SessionSnapshot, {
    source: 'test stream',
    journal,
    clock: manualClock(),
    version: '0.0.0-test',
  });
  return { text, journal, restored };
}

/**
 * `rows` rows of a generator as one frame; labels hidden where `hide(i)` says; ids `e<i>` when asked
 * (i counted from `first`).
 */
export function frameOf(
  gen: StreamGenerator,
  rows: number,
  options: { hide?: (i: number) => boolean; ids?: boolean; first?: number; withLabels?: boolean } = {},
): Frame & { readonly truth: Int32Array } {
  const { hide = () => false, ids = false, first = 0, withLabels = true } = options;
  const block = take(gen, rows);
  const labels = withLabels
    ? Float64Array.from(block.labels, (l, i) => (hide(first + i) ? Number.NaN : l))
    : null;
  return {
    schema: gen.schema,
    rows,
    width: block.width,
    values: block.rows,
    labels,
    ids: ids ? Array.from({ length: rows }, (_, i) => `e${first + i}`) : null,
    origin: { source: 'test', unit: 'row', batch: -1, positions: new Int32Array(rows) },
    truth: block.labels,
  };
}

/** A labels-only frame: `ids[k]` has label `labels[k]`. */
export function labelsFrame(ids: readonly string[], labels: ArrayLike<number>): Frame {
  return {
    schema: { features: [] },
    rows: ids.length,
    width: 0,
    values: new Float64Array(0),
    labels: Float64Array.from(labels),
    ids,
    origin: { source: 'labels', unit: 'row', batch: -1, positions: new Int32Array(ids.length) },
  };
}
