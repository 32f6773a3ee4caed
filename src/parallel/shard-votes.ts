import { type BatchVerdicts, combineVotes, Verdict } from '../ensembles/index.js';

/**
 * Combining the shards' answers into each row's verdict, as one thread's vote: every shard's members'
 * answers of a row gathered in seat order, then `combineVotes`. Once every shard has answered the whole
 * batch, each worker combines its share of the rows (worker w of n takes rows ⌊w·R/n⌋ … ⌊(w+1)·R/n⌋ − 1)
 * into verdicts in shared memory, so the main thread only copies them out.
 */

/** One shard's answers, row-major with `stride` classes a member (see `ShardAnswers`). */
export interface AnswerBuffers {
  readonly stride: number;
  readonly probs: SharedArrayBuffer;
  readonly preds: SharedArrayBuffer;
  readonly weights: SharedArrayBuffer;
  readonly classes: SharedArrayBuffer;
  readonly accuracy: SharedArrayBuffer;
}

/** A batch's verdicts in shared memory (the fields of `BatchVerdicts` the workers fill). */
export interface VerdictBuffers {
  readonly probabilities: SharedArrayBuffer;
  readonly predicted: SharedArrayBuffer;
  readonly agreement: SharedArrayBuffer;
  readonly voters: SharedArrayBuffer;
  readonly spans: SharedArrayBuffer;
  readonly accuracy: SharedArrayBuffer;
}

/** The main thread's shared verdicts, grown as needed and copied into a `BatchVerdicts`. */
export class SharedVerdicts {
  private probabilities = new Float64Array(new SharedArrayBuffer(0));
  private predicted = new Int32Array(new SharedArrayBuffer(0));
  private agreement = new Float64Array(new SharedArrayBuffer(0));
  private voters = new Int32Array(new SharedArrayBuffer(0));
  private spans = new Int32Array(new SharedArrayBuffer(0));
  private accuracy = new Float64Array(new SharedArrayBuffer(0));

  fit(rows: number, stride: number, members: number): VerdictBuffers {
    if (this.probabilities.length < rows * stride)
      this.probabilities = new Float64Array(new SharedArrayBuffer(8 * rows * stride));
    if (this.predicted.length < rows) {
      this.predicted = new Int32Array(new SharedArrayBuffer(4 * rows));
      this.agreement = new Float64Array(new SharedArrayBuffer(8 * rows));
      this.voters = new Int32Array(new SharedArrayBuffer(4 * rows));
      this.spans = new Int32Array(new SharedArrayBuffer(4 * rows));
    }
    if (this.accuracy.length < rows * members)
      this.accuracy = new Float64Array(new SharedArrayBuffer(8 * rows * members));
    return {
      probabilities: this.probabilities.buffer,
      predicted: this.predicted.buffer,
      agreement: this.agreement.buffer,
      voters: this.voters.buffer,
      spans: this.spans.buffer,
      accuracy: this.accuracy.buffer,
    };
  }

  /** Copy the verdicts of `rows` rows into `out` (fitted to them). */
  copyTo(out: BatchVerdicts, rows: number): void {
    out.probabilities.set(this.probabilities.subarray(0, rows * out.classes));
    out.predicted.set(this.predicted.subarray(0, rows));
    out.agreement.set(this.agreement.subarray(0, rows));
    out.voters.set(this.voters.subarray(0, rows));
    out.spans.set(this.spans.subarray(0, rows));
    out.accuracy.set(this.accuracy.subarray(0, rows * out.members));
  }
}

/**
 * Combine rows `from` … `to` − 1 of the shards' answers (`all`, in shard order, `counts` seats each)
 * into `into`, with hard or soft votes.
 */
export function combineRows(
  all: readonly AnswerBuffers[],
  counts: readonly number[],
  hard: boolean,
  from: number,
  to: number,
  into: VerdictBuffers,
): void {
  const members = counts.reduce((a, b) => a + b, 0);
  const stride = all[0]!.stride;
  const shards = all.map((a) => ({
    probs: new Float64Array(a.probs),
    preds: new Int32Array(a.preds),
    weights: new Float64Array(a.weights),
    accuracy: new Float64Array(a.accuracy),
  }));
  const spans = new Int32Array(all[0]!.classes);
  const probabilities = new Float64Array(into.probabilities);
  const predicted = new Int32Array(into.predicted);
  const agreement = new Float64Array(into.agreement);
  const voters = new Int32Array(into.voters);
  const rowSpans = new Int32Array(into.spans);
  const accuracy = new Float64Array(into.accuracy);
  const probs = new Float64Array(members * stride);
  const preds = new Int32Array(members);
  const weights = new Float64Array(members);
  const confidence = new Float64Array(members);
  const verdict = new Verdict();
  for (let r = from; r < to; r++) {
    const c = spans[r]!;
    let seat = 0;
    for (let s = 0; s < shards.length; s++) {
      const shard = shards[s]!;
      const n = counts[s]!;
      const at = r * n;
      for (let m = 0; m < n; m++) {
        preds[seat + m] = shard.preds[at + m]!;
        weights[seat + m] = shard.weights[2 * (at + m)]!;
        confidence[seat + m] = shard.weights[2 * (at + m) + 1]!;
        accuracy[r * members + seat + m] = shard.accuracy[at + m]!;
        for (let k = 0, a = (at + m) * stride, b = (seat + m) * c; k < c; k++)
          probs[b + k] = shard.probs[a + k]!;
      }
      seat += n;
    }
    combineVotes(hard, probs, preds, weights, confidence, members, c, verdict);
    const at = r * stride;
    for (let k = 0; k < stride; k++) probabilities[at + k] = k < c ? verdict.probabilities[k]! : 0;
    rowSpans[r] = c;
    predicted[r] = verdict.predicted;
    agreement[r] = verdict.agreement;
    voters[r] = verdict.voters;
  }
}
