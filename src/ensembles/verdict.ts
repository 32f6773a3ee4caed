/**
 * What an ensemble says about one row: class probabilities, the predicted class, how many of the
 * voting members agree with it, how many voted, and the model epoch (replacements so far); in a
 * regression, the predicted `value` instead of classes. One `Verdict` is reused row after row, so
 * scoring allocates nothing.
 *
 * @example
 * const verdict = new Verdict();
 * ensemble.score(rows, i * width, verdict);
 * verdict.predicted; verdict.probabilities[verdict.predicted]; verdict.agreement;
 */
export class Verdict {
  probabilities: Float64Array = new Float64Array(2);
  /** Number of classes the probabilities cover. */
  classes = 0;
  predicted = 0;
  /** Share of voting members whose own prediction is `predicted`, in [0, 1]. */
  agreement = 0;
  /** Members that voted (warming members sit out while others can vote). */
  voters = 0;
  /** Seat replacements the ensemble has made so far. */
  epoch = 0;
  /** The predicted number of a regression (NaN from a classifier). */
  value = Number.NaN;

  /** Make room for `classes` probabilities. */
  fit(classes: number): Float64Array {
    if (this.probabilities.length < classes)
      this.probabilities = new Float64Array(Math.max(classes, 2 * this.probabilities.length));
    this.classes = classes;
    return this.probabilities;
  }
}
