import { readFrames } from '../files/index.js';
import {
  type Decoded,
  describeRow,
  type Frame,
  type FrameDecoder,
  type FrameFormat,
  type Rejection,
} from '../frames/index.js';
import type { DeadLetter, LearningSession } from '../pipeline/index.js';
import { LabelQueue } from './label-queue.js';

/**
 * When the labels of a replay become known:
 * - `inline`: with their rows (prequential, test-then-train);
 * - `delay`: each inline label is held back until `rows` more rows have been scored, then joined to
 *   the prediction served for its row by id (rows without an id column are joined by their row number);
 * - `file`: labels come from a file of their own (id and label columns), read alongside the events: the
 *   k-th label becomes known once k events have been scored (labels left over at the end are joined
 *   after the last event). A label whose row was not scored yet when it becomes known finds no
 *   prediction and counts as unknown.
 */
export type LabelTiming =
  | { readonly kind: 'inline' }
  | { readonly kind: 'delay'; readonly rows: number }
  | { readonly kind: 'file'; readonly path: string; readonly id: string; readonly label: string };

export interface FeedOptions {
  readonly file: string;
  /** The file's format when its extension does not say. */
  readonly format?: FrameFormat;
  readonly decoder: FrameDecoder;
  readonly session: LearningSession;
  readonly timing: LabelTiming;
  /** Carry the label rows' features (the `train` policy for unmatched labels). */
  readonly carryFeatures: boolean;
  /** `keep`: undecodable rows go to `deadLetter`; `throw`: the first stops the run. */
  readonly rejects: 'throw' | 'keep';
  readonly deadLetter: (letter: DeadLetter) => void;
  /** Called once the schema is known, before the first row is scored. */
  readonly beforeScoring: () => void;
  /** Called after each batch of events is handled (progress, back-pressure). */
  readonly afterBatch: () => Promise<void>;
}

/**
 * Run a recorded stream through a session: every event scored, every label joined when it becomes
 * known (see `LabelTiming`), the resume position advanced after each batch.
 */
export async function feed(o: FeedOptions): Promise<void> {
  const { session, decoder, timing } = o;
  const refuse = (stream: string, rejected: readonly Rejection[]): void => {
    session.reject(rejected.length);
    for (const r of rejected) {
      o.deadLetter({ stream, position: BigInt(r.index), code: 'undecodable', reason: r.reason, bytes: null });
    }
  };
  let queue: LabelQueue | null = null;
  let labels: LabelReader | null = null;
  let consumed = 0n;
  for await (const batch of readFrames(o.file, decoder, {
    rejects: o.rejects,
    ...(o.format === undefined ? {} : { format: o.format }),
  })) {
    refuse(o.file, batch.rejected);
    o.beforeScoring();
    const frame = batch.frame;
    if (timing.kind === 'inline') {
      session.score(frame, decoder.classes);
    } else {
      const schema = o.carryFeatures ? frame.schema : undefined;
      queue ??= new LabelQueue(timing.kind === 'file' ? timing.path : o.file, schema);
      if (timing.kind === 'file') {
        labels ??= new LabelReader(timing, decoder, o.carryFeatures, o.rejects, refuse, o.deadLetter);
        await fromFile(frame, session, decoder, queue, labels);
      } else {
        delayed(frame, session, decoder, queue, timing.rows);
      }
    }
    consumed += BigInt(frame.rows + batch.rejected.length);
    session.advance(o.file, consumed);
    await o.afterBatch();
  }
  if (queue !== null) {
    if (labels !== null) await labels.fill(queue, Number.POSITIVE_INFINITY);
    queue.release(Number.POSITIVE_INFINITY, session, decoder.classes);
  }
}

/** Score a frame with its labels held back `delay` rows each. */
function delayed(
  frame: Frame,
  session: LearningSession,
  decoder: FrameDecoder,
  queue: LabelQueue,
  delay: number,
): void {
  const before = session.scored;
  // Rows without an id column are joined by their row number (a string per row, in this mode only).
  const ids = frame.ids ?? Array.from({ length: frame.rows }, (_, i) => String(before + i + 1));
  const held: Frame = { ...frame, labels: null, ids };
  const labels = frame.labels;
  for (let r = 0; r < frame.rows; ) {
    const room = Math.max(1, Math.min(delay + 1, queue.nextDue() - session.scored));
    const end = Math.min(frame.rows, r + room);
    const base = session.scored;
    session.score(held, decoder.classes, r, end);
    if (labels !== null) {
      for (let i = r; i < end; i++) {
        const label = labels[i]!;
        if (!Number.isNaN(label))
          queue.push(base + (i - r) + 1 + delay, ids[i]!, label, frame.values, i * frame.width);
      }
    }
    queue.release(session.scored, session, decoder.classes);
    r = end;
  }
}

/** Score a frame, joining the labels file's k-th label once k events have been scored. */
async function fromFile(
  frame: Frame,
  session: LearningSession,
  decoder: FrameDecoder,
  queue: LabelQueue,
  labels: LabelReader,
): Promise<void> {
  const held: Frame = { ...frame, labels: null };
  await labels.fill(queue, session.scored + frame.rows);
  for (let r = 0; r < frame.rows; ) {
    const room = Math.max(1, queue.nextDue() - session.scored);
    const end = Math.min(frame.rows, r + room);
    session.score(held, decoder.classes, r, end);
    queue.release(session.scored, session, decoder.classes);
    r = end;
  }
}

/** The labels file, read on demand into the queue: its k-th label (from 1) is due at k rows scored. */
class LabelReader {
  private readonly path: string;
  private readonly frames: AsyncIterator<Decoded>;
  private readonly refuse: (stream: string, rejected: readonly Rejection[]) => void;
  private readonly deadLetter: (letter: DeadLetter) => void;
  private frame: Frame | null = null;
  private at = 0;
  private read = 0;
  private done = false;

  constructor(
    timing: { readonly path: string; readonly id: string; readonly label: string },
    events: FrameDecoder,
    carryFeatures: boolean,
    rejects: 'throw' | 'keep',
    refuse: (stream: string, rejected: readonly Rejection[]) => void,
    deadLetter: (letter: DeadLetter) => void,
  ) {
    this.path = timing.path;
    const decoder = events.labelsDecoder({ id: timing.id, label: timing.label, carryFeatures }, timing.path);
    this.frames = readFrames(timing.path, decoder, { rejects })[Symbol.asyncIterator]();
    this.refuse = refuse;
    this.deadLetter = deadLetter;
  }

  /** Queue labels until `upTo` have been read (or the file ends). */
  async fill(queue: LabelQueue, upTo: number): Promise<void> {
    while (!this.done && this.read < upTo) {
      const frame = this.frame;
      if (frame === null || this.at >= frame.rows) {
        const next = await this.frames.next();
        if (next.done === true) {
          this.done = true;
          return;
        }
        this.refuse(this.path, next.value.rejected);
        this.frame = next.value.frame;
        this.at = 0;
        continue;
      }
      const r = this.at++;
      const label = frame.labels![r]!;
      if (Number.isNaN(label)) {
        this.deadLetter({
          stream: this.path,
          position: BigInt(frame.origin.positions[r]!),
          code: 'no-label',
          reason: `${describeRow(frame, r)}: no label`,
          bytes: null,
        });
        continue;
      }
      this.read++;
      queue.push(this.read, frame.ids![r]!, label, frame.values, r * frame.width);
    }
  }
}
