import type { LifecycleChange } from '../journal/index.js';
import type { Verdict } from './verdict.js';

/**
 * What an ensemble whose members run elsewhere (worker threads, src/parallel) says about a batch of
 * rows, row by row: each row's verdict, the model epoch that served it, each seat's recent accuracy
 * after it, and the lifecycle changes the batch made with the row of each. Reused batch after batch.
 */
export class BatchVerdicts {
  /** Classes a row takes in `probabilities` (the most any row of the batch covers). */
  classes = 0;
  probabilities = new Float64Array(0);
  predicted = new Int32Array(0);
  agreement = new Float64Array(0);
  voters = new Int32Array(0);
  /** The model epoch that served each row. */
  epochs = new Int32Array(0);
  /** Classes each row's probabilities cover (the rest are 0): they grow as labels of new classes come. */
  spans = new Int32Array(0);
  /** Lifecycle changes of the batch, in order, and the row of the batch each happened on. */
  changes: LifecycleChange[] = [];
  rows: number[] = [];
  /** Seats of the ensemble. */
  members = 0;
  /** Each seat's recent accuracy after each row (row-major, `members` a row). */
  accuracy = new Float64Array(0);

  fit(rows: number, classes: number, members: number): void {
    this.classes = classes;
    this.members = members;
    this.changes = [];
    this.rows = [];
    if (this.accuracy.length < rows * members) this.accuracy = new Float64Array(rows * members);
    if (this.probabilities.length < rows * classes) this.probabilities = new Float64Array(rows * classes);
    if (this.predicted.length < rows) {
      this.predicted = new Int32Array(rows);
      this.agreement = new Float64Array(rows);
      this.voters = new Int32Array(rows);
      this.epochs = new Int32Array(rows);
      this.spans = new Int32Array(rows);
    }
  }

  /** Row `r`'s verdict into `verdict`. */
  verdictAt(r: number, verdict: Verdict): void {
    const span = this.spans[r]!;
    const out = verdict.fit(span);
    for (let k = 0, at = r * this.classes; k < span; k++) out[k] = this.probabilities[at + k]!;
    verdict.predicted = this.predicted[r]!;
    verdict.agreement = this.agreement[r]!;
    verdict.voters = this.voters[r]!;
    verdict.epoch = this.epochs[r]!;
  }
}
