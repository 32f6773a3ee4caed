import { FileSource, readFrames } from '../files/index.js';
import {
  type Decoded,
  describeRow,
  type Frame,
  FrameDecoder,
  type FrameFormat,
  type Rejection,
} from '../frames/index.js';
import type { DeadLetter, EventClock, LearningSession, SourceBatch } from '../pipeline/index.js';
import { LabelQueue } from './label-queue.js';
import { Pacer } from './pacer.js';

/**
 * When the labels of a replay become known. Time is the events' `--time` column when one is named,
 * else the row number (1 for the first event scored); events are taken to come in time order.
 * - `inline`: with their rows (prequential, test-then-train);
 * - `delay`: each inline label is held back until `rows` more rows have been scored;
 * - `delay-column`: each inline label is held back until the time in the row's `column`;
 * - `file`: labels come from a file of their own (id and label columns, in the order they arrived):
 *   with `time`, each becomes known at the time in that column; without, the k-th label becomes known
 *   once k events have been scored. Labels left at the end are joined after the last event.
 * Held-back labels are joined by id to the prediction served for their row (in the delay modes, rows
 * without an id column are joined by their row number). A label whose row has not been scored yet when
 * it becomes known is held by the session for its row (`labels.early`) and joined right after the row
 * is scored; one whose row does not come within the bounds counts as unknown.
 *
 * The session's clock is the same time (an `EventClock`, read as seconds): moved to each row's time
 * before the row is scored when labels are held back, and to the time of a batch's last row before the
 * batch is scored when they come inline. A replay never reads the wall clock for the model's state.
 */
export type LabelTiming =
  | { readonly kind: 'inline' }
  | { readonly kind: 'delay'; readonly rows: number }
  | { readonly kind: 'delay-column'; readonly column: string }
  | {
      readonly kind: 'file';
      readonly path: string;
      readonly id: string;
      readonly label: string;
      readonly time: string | null;
    };

export interface FeedOptions {
  readonly file: string;
  /** The file's format when its extension does not say. */
  readonly format?: FrameFormat;
  readonly decoder: FrameDecoder;
  readonly session: LearningSession;
  /** The session's clock, moved on to the stream's time as rows are scored. */
  readonly clock: EventClock;
  readonly timing: LabelTiming;
  /** The events' time column (excluded from the features), or null: time is the row number. */
  readonly time: string | null;
  /** Carry the label rows' features (the `train` policy for unmatched labels). */
  readonly carryFeatures: boolean;
  /** `keep`: undecodable rows go to `deadLetter`; `throw`: the first stops the run. */
  readonly rejects: 'throw' | 'keep';
  readonly deadLetter: (letter: DeadLetter) => void;
  /** Called once the schema is known, before the first row is scored. */
  readonly beforeScoring?: () => void;
  /**
   * Where a resumed run goes on: the rows before this position were consumed before the checkpoint it
   * resumes from, and are skipped. A checkpoint is taken between batches, and a file is cut into the same
   * batches on every read, so the position is a batch boundary. Default: from the start.
   */
  readonly from?: bigint;
  /** Called after each batch of events is handled (progress, back-pressure, checkpoints). */
  readonly afterBatch: () => Promise<void>;
  /** Holds the replay to a live stream's rate (`--pace`); inline labels are scored in its ranges. */
  readonly pacer?: Pacer;
  /** Milliseconds from any fixed origin, to time each scored range (with `scored`). */
  readonly now?: () => number;
  /** Told the rows and seconds of each scored range (the batch histograms). */
  readonly scored?: (rows: number, seconds: number) => void;
}

/**
 * Run a recorded stream through a session: every event scored, every label joined when it becomes
 * known (see `LabelTiming`), the resume position advanced after each batch.
 */
export async function feed(o: FeedOptions): Promise<void> {
  const { session, decoder, timing } = o;
  const pacer = o.pacer ?? new Pacer(undefined, () => 0);
  const clock = o.now ?? (() => 0);
  const scored = o.scored ?? (() => undefined);
  const refuse = (stream: string, rejected: readonly Rejection[]): void => {
    session.reject(rejected.length);
    for (const r of rejected) {
      o.deadLetter({ stream, position: BigInt(r.index), code: 'undecodable', reason: r.reason, bytes: null });
    }
  };
  const columns = [o.time, timing.kind === 'delay-column' ? timing.column : null];
  const format = o.format === undefined ? {} : { format: o.format };
  const extra = columns.some((c) => c !== null) ? new ColumnReader(o.file, columns, format) : null;
  const byTime = timing.kind === 'delay-column' || (timing.kind === 'file' && timing.time !== null);
  let now = Number.NEGATIVE_INFINITY;
  let queue: LabelQueue | null = null;
  let labels: LabelReader | null = null;

  /** The queue (and labels file) once the first frame is known, the frame's extra columns and ids. */
  const prepare = async (frame: Frame, before: number) => {
    queue ??= new LabelQueue(
      timing.kind === 'file' ? timing.path : o.file,
      o.carryFeatures ? frame.schema : undefined,
    );
    if (timing.kind === 'file') {
      labels ??= new LabelReader(timing, decoder, o.carryFeatures, o.rejects, refuse, o.deadLetter);
    }
    const values = extra === null ? null : await extra.align(frame);
    // Rows without an id column are joined by their row number (a string per row, in this mode only).
    const ids = frame.ids ?? Array.from({ length: frame.rows }, (_, i) => String(before + i + 1));
    return { queue, values, ids };
  };

  /** The time of row r of a frame, scored as row `rows` of the run. */
  const rowTime = (values: Float64Array | null, r: number, rows: number): number =>
    o.time === null ? rows : values![r * 2]!;

  /** The time of a batch's last row (the latest time in it), for rows scored inline. */
  const batchTime = async (frame: Frame, before: number): Promise<number> => {
    if (o.time === null) return before + frame.rows;
    const values = await extra!.align(frame);
    let latest = Number.NEGATIVE_INFINITY;
    for (let r = 0; r < frame.rows; r++) if (values[r * 2]! > latest) latest = values[r * 2]!;
    return latest;
  };

  /**
   * Row r of a frame was scored as row `rows` of the run: hold its label, or read the labels file on,
   * and return the moment reached (rows scored, or the events' time). `again`: the row was scored before
   * the checkpoint this run resumes from.
   */
  const hold = async (
    frame: Frame,
    r: number,
    rows: number,
    prepared: Awaited<ReturnType<typeof prepare>>,
    again: boolean,
  ): Promise<number> => {
    const { queue: held, values, ids } = prepared;
    const time = rowTime(values, r, rows);
    if (time > now) now = time;
    const moment = byTime ? now : rows;
    const label = frame.labels === null ? Number.NaN : frame.labels[r]!;
    if (timing.kind === 'delay' && !Number.isNaN(label)) {
      held.push(rows + timing.rows, ids[r]!, label, frame.values, r * frame.width);
    } else if (timing.kind === 'delay-column' && !Number.isNaN(label)) {
      held.push(values![r * 2 + 1]!, ids[r]!, label, frame.values, r * frame.width);
    } else if (labels?.behind(moment)) {
      await labels.fill(held, moment, again);
    }
    return moment;
  };

  const from = o.from ?? 0n;
  // Rows counted again on the way to a resume position (they were scored before the checkpoint).
  let recounted = 0;
  const events = new FileSource(o.file, decoder, o.rejects, o.format);
  try {
    // A resumed run reads the rows before its checkpoint once more, when they hold what it needs:
    // labels held back then are held again (those already joined by then, due by that moment, dropped),
    // and the stream's time goes on from the latest reached.
    if (from > 0n && (timing.kind !== 'inline' || o.time !== null)) {
      for await (const batch of events.open(new Map())) {
        if (batch.next > from) break;
        const frame = batch.frame;
        if (timing.kind === 'inline') {
          o.clock.reach(await batchTime(frame, 0));
          continue;
        }
        const prepared = await prepare(frame, recounted);
        for (let r = 0; r < frame.rows; r++) {
          o.clock.reach(rowTime(prepared.values, r, ++recounted));
          prepared.queue.drop(await hold(frame, r, recounted, prepared, true));
        }
      }
    }
    for await (const batch of events.open(new Map([[o.file, from]]))) {
      const frame = batch.frame;
      refuse(batch.stream, batch.rejected);
      o.beforeScoring?.();
      if (timing.kind === 'inline') {
        o.clock.reach(await batchTime(frame, session.scored));
        for (const [from, to] of pacer.ranges(frame.rows)) {
          const started = clock();
          await session.scoreAsync(frame, decoder.classes, from, to);
          scored(to - from, (clock() - started) / 1000);
          await pacer.wait(to - from);
        }
      } else {
        const started = clock();
        const prepared = await prepare(frame, session.scored);
        const held: Frame = { ...frame, labels: null, ids: prepared.ids };
        for (let r = 0; r < frame.rows; r++) {
          o.clock.reach(rowTime(prepared.values, r, session.scored + 1));
          await session.scoreAsync(held, decoder.classes, r, r + 1);
          const moment = await hold(frame, r, session.scored, prepared, false);
          await prepared.queue.release(moment, session, decoder.classes);
        }
        scored(frame.rows, (clock() - started) / 1000);
        await pacer.wait(frame.rows);
      }
      session.advance(batch.stream, batch.next);
      await o.afterBatch();
    }
    const last = queue as LabelQueue | null;
    if (last !== null) {
      if (labels !== null) await (labels as LabelReader).fill(last, Number.POSITIVE_INFINITY);
      await last.release(Number.POSITIVE_INFINITY, session, decoder.classes);
    }
  } finally {
    await Promise.all([extra?.close(), (labels as LabelReader | null)?.close()]);
  }
}

/**
 * Numeric columns of the events file that are not features (the time, a label's time), read by a
 * second pass in step with the first and matched row by row through each row's position.
 */
class ColumnReader {
  private readonly frames: AsyncIterator<Decoded>;
  private readonly width: number;
  private frame: Frame | null = null;
  private at = 0;
  private done = false;
  private out = new Float64Array(0);
  private readonly slots: readonly number[];

  /** `columns[k]` null leaves slot k of each row NaN. */
  constructor(path: string, columns: readonly (string | null)[], format: { readonly format?: FrameFormat }) {
    this.width = columns.length;
    const named = columns.filter((c): c is string => c !== null);
    const decoder = new FrameDecoder(
      { label: null, features: named.map((name) => ({ name, kind: 'numeric' as const })) },
      path,
    );
    this.frames = readFrames(path, decoder, { rejects: 'keep', ...format })[Symbol.asyncIterator]();
    this.slots = columns.map((c) => (c === null ? -1 : named.indexOf(c)));
  }

  /** Stop reading (the file is closed). */
  async close(): Promise<void> {
    await this.frames.return?.(undefined);
  }

  /** The columns' values for each row of an events frame (`width` per row; NaN where unreadable). */
  async align(events: Frame): Promise<Float64Array> {
    if (this.out.length < events.rows * this.width) this.out = new Float64Array(events.rows * this.width * 2);
    const out = this.out.fill(Number.NaN);
    for (let r = 0; r < events.rows; r++) {
      const batch = events.origin.batch;
      const position = events.origin.positions[r]!;
      for (;;) {
        const frame = this.frame;
        if (frame === null || this.at >= frame.rows) {
          if (this.done) break;
          const next = await this.frames.next();
          if (next.done === true) {
            this.done = true;
            break;
          }
          this.frame = next.value.frame;
          this.at = 0;
          continue;
        }
        const b = frame.origin.batch;
        const p = frame.origin.positions[this.at]!;
        if (b < batch || (b === batch && p < position)) {
          this.at++;
          continue;
        }
        if (b === batch && p === position) {
          for (let k = 0; k < this.width; k++) {
            const j = this.slots[k]!;
            if (j >= 0) out[r * this.width + k] = frame.values[this.at * frame.width + j]!;
          }
          this.at++;
        }
        break;
      }
    }
    return out;
  }
}

/**
 * The labels file, read on demand into the queue. Its k-th label (from 1) is due at k rows scored, or
 * at the time in its time column; one label is read ahead, so `behind(now)` tells whether more may be due.
 */
class LabelReader {
  private readonly path: string;
  private readonly frames: AsyncIterator<SourceBatch>;
  private readonly refuse: (stream: string, rejected: readonly Rejection[]) => void;
  private readonly deadLetter: (letter: DeadLetter) => void;
  private readonly timed: boolean;
  private frame: Frame | null = null;
  private at = 0;
  private read = 0;
  private last = Number.NEGATIVE_INFINITY;
  private done = false;

  constructor(
    timing: {
      readonly path: string;
      readonly id: string;
      readonly label: string;
      readonly time: string | null;
    },
    events: FrameDecoder,
    carryFeatures: boolean,
    rejects: 'throw' | 'keep',
    refuse: (stream: string, rejected: readonly Rejection[]) => void,
    deadLetter: (letter: DeadLetter) => void,
  ) {
    this.path = timing.path;
    this.timed = timing.time !== null;
    const decoder = events.labelsDecoder(
      {
        id: timing.id,
        label: timing.label,
        carryFeatures,
        ...(timing.time === null ? {} : { time: timing.time }),
      },
      timing.path,
    );
    this.frames = new FileSource(timing.path, decoder, rejects).open(new Map())[Symbol.asyncIterator]();
    this.refuse = refuse;
    this.deadLetter = deadLetter;
  }

  /** Stop reading (the file is closed). */
  async close(): Promise<void> {
    await this.frames.return?.(undefined);
  }

  /** Whether the last label read is due by `now`, so that later ones may be too. */
  behind(now: number): boolean {
    return !this.done && this.last <= now;
  }

  /**
   * Queue labels until one is due after `now` (or the file ends). `again`: these lines were read before
   * a checkpoint this run resumes from, so a line without a label is not dead-lettered a second time.
   */
  async fill(queue: LabelQueue, now: number, again = false): Promise<void> {
    while (this.behind(now)) {
      const frame = this.frame;
      if (frame === null || this.at >= frame.rows) {
        const next = await this.frames.next();
        if (next.done === true) {
          this.done = true;
          return;
        }
        if (!again) this.refuse(this.path, next.value.rejected);
        this.frame = next.value.frame;
        this.at = 0;
        continue;
      }
      const r = this.at++;
      const label = frame.labels![r]!;
      const due = this.timed ? frame.values[r * frame.width + frame.width - 1]! : this.read + 1;
      if (Number.isNaN(label) || Number.isNaN(due)) {
        if (again) continue;
        this.deadLetter({
          stream: this.path,
          position: BigInt(frame.origin.positions[r]!),
          code: Number.isNaN(label) ? 'no-label' : 'no-time',
          reason: `${describeRow(frame, r)}: no ${Number.isNaN(label) ? 'label' : 'time'}`,
          bytes: null,
        });
        continue;
      }
      this.read++;
      this.last = due;
      queue.push(due, frame.ids![r]!, label, frame.values, r * frame.width);
    }
  }
}
