import { describe, expect, it } from 'vitest';
import { RegressionBagging, type RegressionBaggingSnapshot, Verdict } from '../../src/ensembles/index.js';
import { HoeffdingRegressionTree } from '../../src/learners/index.js';
import { note } from '../support/note.js';
import { friedman1 } from '../support/regressor-streams.js';

/** The bag's prediction for row i, made before it trains on the row's target. */
function step(bag: RegressionBagging, rows: Float64Array, i: number, target: number): number {
  const verdict = new Verdict();
  bag.scoreTrain(rows, i * 10, target, verdict);
  return verdict.value;
}

/** Prequential mean squared error over the last `tail` rows. */
function mseOf(predict: (i: number) => number, targets: Float64Array, tail: number): number {
  let sum = 0;
  for (let i = 0; i < targets.length; i++) {
    const e = predict(i) - targets[i]!;
    if (i >= targets.length - tail) sum += e * e;
  }
  return sum / tail;
}

describe('regression bagging (Oza & Russell 2001 with regressors)', () => {
  it('on Friedman #1 beats one tree and stays above the noise floor', () => {
    // Friedman, Ann. Statist. 1991: y = f(x) + N(0, 1), so no predictor's expected MSE is below 1.
    const data = friedman1(30_000, 41);
    const bag = new RegressionBagging(data.schema, { members: 8 }, 3);
    const tree = new HoeffdingRegressionTree(data.schema);
    const bagged = mseOf((i) => step(bag, data.rows, i, data.targets[i]!), data.targets, 10_000);
    const single = mseOf(
      (i) => {
        const y = tree.predict(data.rows, i * 10);
        tree.train(data.rows, i * 10, data.targets[i]!, 1);
        return y;
      },
      data.targets,
      10_000,
    );
    note(`Friedman #1, last 10,000 rows: bagged MSE ${bagged.toFixed(3)}, one tree ${single.toFixed(3)}`);
    expect(bagged).toBeLessThan(single);
    // 4 standard errors of the mean of 10,000 squared N(0, 1) deviates (variance 2): 4·√(2/10⁴).
    expect(bagged).toBeGreaterThan(1 - 4 * Math.sqrt(2 / 10_000));
  });

  it('predicts the members’ mean, restores exactly, and refuses bad options', () => {
    const data = friedman1(3000, 42);
    const bag = new RegressionBagging(
      data.schema,
      { members: 3, learners: [{ kind: 'linear-regression' }] },
      4,
    );
    for (let i = 0; i < 2000; i++) step(bag, data.rows, i, data.targets[i]!);
    const copy = RegressionBagging.restore(
      JSON.parse(JSON.stringify(bag.snapshot())) as RegressionBaggingSnapshot,
    );
    for (let i = 2000; i < 3000; i++) {
      expect(step(copy, data.rows, i, data.targets[i]!)).toBe(step(bag, data.rows, i, data.targets[i]!));
    }
    expect(() => new RegressionBagging(data.schema, { members: 0 })).toThrow(/members/);
    expect(() => new RegressionBagging(data.schema, { lambda: -1 })).toThrow(/lambda/);
    expect(() => step(bag, data.rows, 0, Number.NaN)).toThrow(/target/);
    expect(bag.seats()).toEqual([]);
  });
});
