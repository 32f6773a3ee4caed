import { type BatchVerdicts, combineVotes, type MemberAnswers, Verdict } from '../ensembles/index.js';

/**
 * Combining the shards' answers into each row's verdict, as one thread's vote: `combineVotes` over every
 * shard's answers to the row as one part each, in seat order, read where the shard wrote them. The workers combine the rows in chunks,
 * each chunk by the first worker to ask for it once every shard has answered its rows — so a worker that
 * is through with its seats combines while another still trains — into verdicts in shared memory, and
 * the main thread only copies them out.
 */

/** One shard's answers, row-major with `stride` classes a member (see `ShardAnswers`). */
export interface AnswerBuffers {
  readonly stride: number;
  readonly probs: SharedArrayBuffer;
  readonly preds: SharedArrayBuffer;
  readonly weights: SharedArrayBuffer;
  readonly confidence: SharedArrayBuffer;
  readonly classes: SharedArrayBuffer;
  readonly accuracy: SharedArrayBuffer;
}

/** Typed views of one shard's answers. */
export interface AnswerViews {
  readonly probs: Float64Array;
  readonly preds: Int32Array;
  readonly weights: Float64Array;
  readonly confidence: Float64Array;
  readonly classes: Int32Array;
  readonly accuracy: Float64Array;
}

/** Views of a shard's answer buffers. */
export function answerViews(a: AnswerBuffers): AnswerViews {
  return {
    probs: new Float64Array(a.probs),
    preds: new Int32Array(a.preds),
    weights: new Float64Array(a.weights),
    confidence: new Float64Array(a.confidence),
    classes: new Int32Array(a.classes),
    accuracy: new Float64Array(a.accuracy),
  };
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

  /** The last buffers handed out: the same object while none changed. */
  private buffers: VerdictBuffers | null = null;

  fit(rows: number, stride: number, members: number): VerdictBuffers {
    let changed = this.buffers === null;
    if (this.probabilities.length < rows * stride) {
      this.probabilities = new Float64Array(new SharedArrayBuffer(8 * rows * stride));
      changed = true;
    }
    if (this.predicted.length < rows) {
      this.predicted = new Int32Array(new SharedArrayBuffer(4 * rows));
      this.agreement = new Float64Array(new SharedArrayBuffer(8 * rows));
      this.voters = new Int32Array(new SharedArrayBuffer(4 * rows));
      this.spans = new Int32Array(new SharedArrayBuffer(4 * rows));
      changed = true;
    }
    if (this.accuracy.length < rows * members) {
      this.accuracy = new Float64Array(new SharedArrayBuffer(8 * rows * members));
      changed = true;
    }
    if (!changed) return this.buffers!;
    this.buffers = {
      probabilities: this.probabilities.buffer,
      predicted: this.predicted.buffer,
      agreement: this.agreement.buffer,
      voters: this.voters.buffer,
      spans: this.spans.buffer,
      accuracy: this.accuracy.buffer,
    };
    return this.buffers;
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
 * Combines rows of the shards' answers (`all`, in shard order, `counts` seats each) into `into`, with
 * hard or soft votes, reading each shard's answers where its members wrote them; made once a batch, then
 * asked for chunk after chunk of rows.
 */
export class RowCombiner {
  private readonly counts: readonly number[];
  private readonly hard: boolean;
  private readonly members: number;
  private readonly stride: number;
  private readonly shards: AnswerViews[];
  private readonly spans: Int32Array;
  private readonly probabilities: Float64Array;
  private readonly predicted: Int32Array;
  private readonly agreement: Float64Array;
  private readonly voters: Int32Array;
  private readonly rowSpans: Int32Array;
  private readonly accuracy: Float64Array;
  /** Each shard's answers as a part of the vote, pointed at the row being combined. */
  private readonly parts: { -readonly [K in keyof MemberAnswers]: MemberAnswers[K] }[];
  private readonly verdict = new Verdict();

  constructor(all: readonly AnswerBuffers[], counts: readonly number[], hard: boolean, into: VerdictBuffers) {
    this.counts = counts;
    this.hard = hard;
    this.members = counts.reduce((a, b) => a + b, 0);
    this.stride = all[0]!.stride;
    this.shards = all.map(answerViews);
    this.spans = this.shards[0]!.classes;
    this.probabilities = new Float64Array(into.probabilities);
    this.predicted = new Int32Array(into.predicted);
    this.agreement = new Float64Array(into.agreement);
    this.voters = new Int32Array(into.voters);
    this.rowSpans = new Int32Array(into.spans);
    this.accuracy = new Float64Array(into.accuracy);
    this.parts = this.shards.map((shard) => ({
      probs: shard.probs,
      preds: shard.preds,
      weights: shard.weights,
      confidence: shard.confidence,
      classes: 0,
      stride: this.stride,
      at: 0,
    }));
  }

  /** Combine rows `from` … `to` − 1. */
  rows(from: number, to: number): void {
    const { counts, members, stride, shards, spans, accuracy, parts, verdict } = this;
    for (let r = from; r < to; r++) {
      const c = spans[r]!;
      let seat = r * members;
      for (let s = 0; s < shards.length; s++) {
        const part = parts[s]!;
        const n = counts[s]!;
        const at = r * n;
        part.at = at;
        part.classes = c;
        const answered = shards[s]!.accuracy;
        for (let m = 0; m < n; m++) accuracy[seat + m] = answered[at + m]!;
        seat += n;
      }
      combineVotes(this.hard, parts, counts, verdict);
      const at = r * stride;
      for (let k = 0; k < stride; k++) this.probabilities[at + k] = k < c ? verdict.probabilities[k]! : 0;
      this.rowSpans[r] = c;
      this.predicted[r] = verdict.predicted;
      this.agreement[r] = verdict.agreement;
      this.voters[r] = verdict.voters;
    }
  }
}
