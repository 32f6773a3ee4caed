import type { Classifier } from '../../src/learners/learner.js';
import { type StreamGenerator, take } from '../../src/streams/index.js';

/**
 * Accuracy measurements shared by the learner tests: prequential (test, then train, on every row) and
 * holdout (train on a block, then score a fresh block from the same generator without training).
 */

/** Prequential accuracy over `rows` rows, overall and over the last `tail` rows. */
export function prequential(
  learner: Classifier,
  gen: StreamGenerator,
  rows: number,
  tail = 1000,
): { accuracy: number; tail: number } {
  const width = gen.schema.features.length;
  const row = new Float64Array(width);
  const out = new Float64Array(gen.classes.length);
  learner.ensureClasses(gen.classes.length);
  let correct = 0;
  let tailCorrect = 0;
  for (let i = 0; i < rows; i++) {
    const label = gen.next(row, 0);
    const hit = learner.scoreTrain(row, 0, label, 1, out, 0) === label ? 1 : 0;
    correct += hit;
    if (i >= rows - tail) tailCorrect += hit;
  }
  return { accuracy: correct / rows, tail: tailCorrect / tail };
}

/** Train on `trainRows` rows, then return the accuracy on the next `testRows` rows (no training on them). */
export function holdout(
  learner: Classifier,
  gen: StreamGenerator,
  trainRows: number,
  testRows: number,
): number {
  learner.ensureClasses(gen.classes.length);
  const train = take(gen, trainRows);
  for (let i = 0; i < trainRows; i++) learner.train(train.rows, i * train.width, train.labels[i]!, 1);
  return accuracyOn(learner, take(gen, testRows), gen.classes.length);
}

/** Accuracy of `learner` (scoring only) on a block of rows. */
export function accuracyOn(
  learner: Classifier,
  block: { width: number; rows: Float64Array; labels: Int32Array },
  classes: number,
): number {
  const out = new Float64Array(classes);
  let correct = 0;
  for (let i = 0; i < block.labels.length; i++) {
    if (learner.score(block.rows, i * block.width, out, 0) === block.labels[i]) correct++;
  }
  return correct / block.labels.length;
}

/** A Bayes accuracy `p` plus three standard errors of an accuracy measured on `n` rows. */
export function ceiling(p: number, n: number): number {
  return p + 3 * Math.sqrt((p * (1 - p)) / n);
}
