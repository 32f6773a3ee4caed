import type { Verdict } from '../ensembles/index.js';
import type { ScoreBatch } from './ports.js';

/**
 * The buffers a session scores a batch into, grown by doubling and reused from batch to batch, so that
 * scoring allocates only when a batch is larger (or has more classes) than any before it. The batch
 * handed out views them and stays valid until the next `reserve`.
 */
export class ScoreBuffers implements ScoreBatch {
  first = 0;
  rows = 0;
  classes: readonly string[] = [];
  ids: readonly string[] | null = null;
  probabilities = new Float64Array(0);
  predicted = new Int32Array(0);
  values = new Float64Array(0);
  agreement = new Float64Array(0);
  voters = new Int32Array(0);
  epoch = new Int32Array(0);
  scoredAt = 0;
  private stride = 1;

  /** Make room for `rows` rows of `stride` probabilities each and start a batch. */
  reserve(
    first: number,
    rows: number,
    stride: number,
    classes: readonly string[],
    ids: readonly string[] | null,
    scoredAt: number,
  ): ScoreBatch {
    if (this.predicted.length < rows) {
      const size = grown(this.predicted.length, rows);
      this.predicted = new Int32Array(size);
      this.values = new Float64Array(size);
      this.agreement = new Float64Array(size);
      this.voters = new Int32Array(size);
      this.epoch = new Int32Array(size);
    }
    if (this.probabilities.length < rows * stride) {
      this.probabilities = new Float64Array(grown(this.probabilities.length, rows * stride));
    }
    this.first = first;
    this.rows = rows;
    this.stride = stride;
    this.classes = classes;
    this.ids = ids;
    this.scoredAt = scoredAt;
    return this;
  }

  /** Row r's verdict. */
  put(r: number, verdict: Verdict): void {
    const stride = this.stride;
    const base = r * stride;
    const n = Math.min(verdict.classes, stride);
    for (let k = 0; k < stride; k++) this.probabilities[base + k] = k < n ? verdict.probabilities[k]! : 0;
    this.predicted[r] = verdict.predicted;
    this.values[r] = verdict.value;
    this.agreement[r] = verdict.agreement;
    this.voters[r] = verdict.voters;
    this.epoch[r] = verdict.epoch;
  }
}

function grown(current: number, needed: number): number {
  let size = Math.max(16, current);
  while (size < needed) size *= 2;
  return size;
}
