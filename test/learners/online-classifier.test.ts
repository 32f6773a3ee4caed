import { describe, expect, it } from 'vitest';
import { ShoalError } from '../../src/core/index.js';
import { KnnWindow } from '../../src/learners/knn-window.js';
import type { Classifier, LearnerSnapshot } from '../../src/learners/learner.js';
import { LinearSvm } from '../../src/learners/linear-svm.js';
import { Logistic } from '../../src/learners/logistic.js';
import { Mlp } from '../../src/learners/mlp.js';
import { NaiveBayes } from '../../src/learners/naive-bayes.js';
import { sea, take } from '../../src/streams/index.js';

const schema = sea().schema;
const LEARNERS: readonly [string, () => Classifier, (s: LearnerSnapshot) => Classifier][] = [
  ['naive-bayes', () => new NaiveBayes(schema), NaiveBayes.restore],
  ['logistic', () => new Logistic(schema), Logistic.restore],
  ['linear-svm', () => new LinearSvm(schema), LinearSvm.restore],
  ['knn-window', () => new KnnWindow(schema), KnnWindow.restore],
  ['mlp', () => new Mlp(schema, {}, 1), Mlp.restore],
];

describe.each(LEARNERS)('%s, through the shared skeleton', (_name, make, restore) => {
  it('starts with class 0 alone and scores it with certainty', () => {
    const learner = make();
    expect(learner.classes).toBe(1);
    const out = new Float64Array(1);
    expect(learner.score(new Float64Array([1, 2, 3]), 0, out, 0)).toBe(0);
    expect(out[0]).toBe(1);
  });

  it('scores a new label with the old classes, then grows; weight 0 grows nothing', () => {
    const learner = make();
    const row = new Float64Array([1, 2, 3]);
    const out = new Float64Array(4);
    learner.train(row, 0, 3, 0);
    expect(learner.classes).toBe(1);
    out.fill(-1);
    learner.scoreTrain(row, 0, 2, 1, out, 0);
    expect(Array.from(out)).toEqual([1, -1, -1, -1]);
    expect(learner.classes).toBe(3);
  });

  it('refuses a snapshot whose arrays do not fit its class count', () => {
    const learner = make();
    const block = take(sea({}, 91), 50);
    learner.ensureClasses(2);
    for (let i = 0; i < 50; i++) learner.train(block.rows, i * 3, block.labels[i]!, 1);
    const snapshot = learner.snapshot();
    const state = { ...(snapshot.state as Record<string, unknown>), classes: 1 };
    let thrown: unknown;
    try {
      restore({ ...snapshot, state });
    } catch (e) {
      thrown = e;
    }
    expect(thrown).toBeInstanceOf(ShoalError);
    expect((thrown as ShoalError).code).toBe('invalid-snapshot');
  });
});
