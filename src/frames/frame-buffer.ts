import type { FeatureSchema } from '../core/index.js';
import type { Frame, PositionUnit } from './frame.js';

/**
 * The buffers a decoder fills and hands out as frames: values, labels and positions, grown by
 * doubling and reused from batch to batch, so that decoding a stream allocates only when a batch is
 * larger than any before it. Frames are `subarray` views of these buffers.
 */
export class FrameBuffer {
  values = new Float64Array(0);
  labels = new Float64Array(0);
  positions = new Int32Array(0);
  /** Rows refused while filling column by column (Arrow), compacted away before the frame is made. */
  refused = new Uint8Array(0);

  /** Make room for `rows` rows of `width` values (the contents need not survive). */
  reserve(rows: number, width: number): void {
    if (this.values.length < rows * width)
      this.values = new Float64Array(capacity(this.values.length, rows * width));
    if (this.labels.length < rows) {
      const size = capacity(this.labels.length, rows);
      this.labels = new Float64Array(size);
      this.positions = new Int32Array(size);
      this.refused = new Uint8Array(size);
    }
  }

  /**
   * Drop the rows marked in `refused[0 … rows)` by moving later rows down (and clear the marks); returns
   * how many rows remain. Ids, when present, are compacted in step.
   */
  compact(rows: number, width: number, ids: string[] | null): number {
    const { values, labels, positions, refused } = this;
    let kept = 0;
    for (let r = 0; r < rows; r++) {
      if (refused[r] === 1) {
        refused[r] = 0;
        continue;
      }
      if (kept !== r) {
        values.copyWithin(kept * width, r * width, (r + 1) * width);
        labels[kept] = labels[r]!;
        positions[kept] = positions[r]!;
        if (ids !== null) ids[kept] = ids[r]!;
      }
      kept++;
    }
    if (ids !== null) ids.length = kept;
    return kept;
  }

  /** A frame of the first `rows` rows, viewing these buffers. */
  frame(
    schema: FeatureSchema,
    rows: number,
    hasLabels: boolean,
    ids: readonly string[] | null,
    source: string,
    unit: PositionUnit,
    batch: number,
  ): Frame {
    const width = schema.features.length;
    return {
      schema,
      rows,
      width,
      values: this.values.subarray(0, rows * width),
      labels: hasLabels ? this.labels.subarray(0, rows) : null,
      ids,
      origin: { source, unit, batch, positions: this.positions.subarray(0, rows) },
    };
  }
}

/** The next size by doubling (at least 16) that holds `needed`. */
function capacity(current: number, needed: number): number {
  let size = Math.max(16, current);
  while (size < needed) size *= 2;
  return size;
}
