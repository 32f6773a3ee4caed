import type { FeatureSchema } from '../core/index.js';

/**
 * A frame: the unit every hot path in Shoal works on. `rows` rows of `width` doubles, row-major, so
 * that a learner reads row i in place as (values, i × width): no object per event, no array per event.
 * NaN marks a missing value; a nominal feature holds a category code 0 … values − 1.
 *
 * Frames handed out by a `FrameDecoder` share the decoder's buffers: a frame stays valid until the
 * decoder decodes the next one. Keep a frame longer with `cloneFrame`.
 *
 * @example
 * for await (const { frame } of readFrames('legs.arrow', new FrameDecoder())) {
 *   for (let i = 0; i < frame.rows; i++) ensemble.score(frame.values, i * frame.width);
 * }
 */
export interface Frame {
  /** The same object for every frame of one stream. */
  readonly schema: FeatureSchema;
  readonly rows: number;
  /** `schema.features.length`. */
  readonly width: number;
  /** rows × width doubles, row-major. */
  readonly values: Float64Array;
  /** Class code of each row (NaN = no label on that row); null when the source has no label column. */
  readonly labels: Float64Array | null;
  /** Event id of each row; null when no id column is named. */
  readonly ids: readonly string[] | null;
  /** Where each row came from, for messages that point at the input. */
  readonly origin: FrameOrigin;
}

/** How a position in `FrameOrigin.positions` is counted. */
export type PositionUnit = 'line' | 'row' | 'record';

/**
 * Where the rows of a frame came from. One integer per row rather than an object per row: for text
 * sources the 1-based line on which the row starts, for Arrow sources the 0-based row within the record
 * batch (or within the message), for single records the record index the caller gave.
 */
export interface FrameOrigin {
  /** A file path, or the caller's name for a message (for example `events/3@1204`). */
  readonly source: string;
  readonly unit: PositionUnit;
  /** Index of the Arrow record batch in the source; −1 when batches are not counted. */
  readonly batch: number;
  readonly positions: Int32Array;
}

/** A row or record the decoder refused, as a value: the pipeline dead-letters it and carries on. */
export interface Rejection {
  /** The line, row or record index, counted as in `FrameOrigin.positions`. */
  readonly index: number;
  /** A complete message: where (source and position) and what was wrong. */
  readonly reason: string;
}

/** One decoded batch: the frame of the rows that decoded and the rows that did not. */
export interface Decoded {
  readonly frame: Frame;
  readonly rejected: readonly Rejection[];
}

/**
 * The outcome of decoding one message (a Kafka record value): either a frame with any rejected rows,
 * or the reason the whole message could not be read.
 */
export type MessageDecode =
  | ({ readonly ok: true } & Decoded)
  | { readonly ok: false; readonly reason: string };

/** Describe where a position lies, for example `legs.csv line 17` or `legs.arrow batch 2 row 5`. */
export function describePosition(
  source: string,
  unit: PositionUnit,
  batch: number,
  position: number,
): string {
  if (unit === 'row' && batch >= 0) return `${source} batch ${batch} row ${position}`;
  return `${source} ${unit} ${position}`;
}

/** Describe where row `row` of a frame came from, for example `legs.csv line 17`. */
export function describeRow(frame: Frame, row: number): string {
  const { source, unit, batch, positions } = frame.origin;
  return describePosition(source, unit, batch, positions[row]!);
}

/** A copy of a frame that owns its buffers, for keeping a frame past the decoder's next call. */
export function cloneFrame(frame: Frame): Frame {
  return {
    schema: frame.schema,
    rows: frame.rows,
    width: frame.width,
    values: frame.values.slice(),
    labels: frame.labels === null ? null : frame.labels.slice(),
    ids: frame.ids === null ? null : [...frame.ids],
    origin: { ...frame.origin, positions: frame.origin.positions.slice() },
  };
}
