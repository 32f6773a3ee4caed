import LogisticRegression from 'ml-logistic-regression';
import { Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { nominal } from '../../src/core/index.js';
import type { LearnerSnapshot } from '../../src/learners/learner.js';
import { Logistic } from '../../src/learners/logistic.js';
import { type GeneratedBlock, led, sea, stagger, take } from '../../src/streams/index.js';
import { describeLearnerContract } from '../support/learner-contract.js';
import { note } from '../support/note.js';
import { accuracyOn, ceiling, holdout } from './accuracy.js';

describeLearnerContract({
  name: 'logistic',
  make: (gen, seed) => new Logistic(gen.schema, {}, seed),
  restore: (s: LearnerSnapshot) => Logistic.restore(s),
});

describeLearnerContract({
  name: 'logistic (constant step, no penalty)',
  make: (gen, seed) => new Logistic(gen.schema, { rateDecay: 0, l2: 0 }, seed),
  restore: (s: LearnerSnapshot) => Logistic.restore(s),
});

/** A design matrix for the reference: features standardised with the training block's statistics, plus 1. */
function design(block: GeneratedBlock, mean: number[], sd: number[]): Matrix {
  const w = block.width;
  return new Matrix(
    Array.from(block.labels, (_, i) => [...mean.map((m, j) => (block.rows[i * w + j]! - m) / sd[j]!), 1]),
  );
}

describe('logistic against outside references', () => {
  it('lands within one accuracy point of ml-logistic-regression fitted in batch on SEA', () => {
    // Reference: npm `ml-logistic-regression` 2.0.0 (one-vs-all, full-batch gradient ascent, no intercept of
    // its own), fitted on the same 10,000 rows, standardised and given a constant column; 150 steps of mean
    // gradient step 2 reach its optimum (checked when this test was written: on 5,000 SEA rows its weights
    // stop moving in the third decimal after 100 steps).
    // Data: SEA θ = 8 with 10% noise (Street & Kim 2001). Its concept is the half-plane f1 + f2 ≤ 8, so a
    // linear model is well specified up to the flipped labels and a batch fit lands near the 90% Bayes rate;
    // our one online pass must land within one point of it on the same 10,000 test rows.
    const gen = sea({ threshold: 8, noise: 0.1 }, 41);
    const n = 10_000;
    const train = take(gen, n);
    const test = take(gen, n);
    const mean = [0, 1, 2].map(
      (j) => train.rows.filter((_, k) => k % 3 === j).reduce((a, b) => a + b, 0) / n,
    );
    const sd = [0, 1, 2].map((j) =>
      Math.sqrt(train.rows.filter((_, k) => k % 3 === j).reduce((a, b) => a + (b - mean[j]!) ** 2, 0) / n),
    );
    const reference = new LogisticRegression({ numSteps: 150, learningRate: 2 / n });
    reference.train(design(train, mean, sd), Matrix.columnVector(Array.from(train.labels)));
    const predicted = reference.predict(design(test, mean, sd));
    const theirs = predicted.filter((k, i) => k === test.labels[i]).length / n;

    const ours = new Logistic(gen.schema);
    ours.ensureClasses(2);
    for (let i = 0; i < n; i++) ours.train(train.rows, i * 3, train.labels[i]!, 1);
    const mine = accuracyOn(ours, test, 2);
    note(`SEA: logistic ${mine.toFixed(4)}, ml-logistic-regression ${theirs.toFixed(4)}`);
    expect(Math.abs(mine - theirs)).toBeLessThanOrEqual(0.01);
    // Street & Kim 2001 with 10% flips: 0.90 is the Bayes bound (PUBLISHED.md, derived).
    expect(mine).toBeLessThanOrEqual(ceiling(0.9, n));
  });

  it('LED, 10% noise: ten classes, holdout accuracy near the 74% Bayes rate and not beyond it', () => {
    // Breiman et al. 1984 (PUBLISHED.md [seen], 0.740022 derived). The Bayes rule of LED is linear in the
    // one-hot segments (its log-odds are sums of per-segment terms), so the multinomial model can reach it.
    const accuracy = holdout(new Logistic(led().schema), led({ noise: 0.1 }, 42), 20_000, 10_000);
    note(`LED: logistic holdout accuracy ${accuracy.toFixed(4)}`);
    expect(accuracy).toBeGreaterThanOrEqual(0.72);
    expect(accuracy).toBeLessThanOrEqual(ceiling(0.740022, 10_000));
  });

  it.each(['a', 'b'] as const)('STAGGER concept %s, noise-free: 100%% on held-out rows', (concept) => {
    // Schlimmer & Granger 1986: noise-free concepts, so 100% is reachable (PUBLISHED.md); concepts a
    // (small ∧ red) and b (green ∨ circular) are linearly separable in the one-hot encoding.
    const accuracy = holdout(new Logistic(stagger().schema), stagger({ concept }, 43), 3000, 2000);
    expect(accuracy).toBe(1);
  });
});

describe('logistic against its definition', () => {
  it('takes one gradient step of the log loss by hand', () => {
    // From zero weights p = (½, ½); the step on row x (one-hot v = 1, plus the constant 1) with label 0 is
    // w_c ← w_c − η (p_c − [c = 0]) x, so with η = 0.5: w_0 = +0.25 and w_1 = −0.25 on both active inputs,
    // logits (0.5, −0.5) and P(0) = 1 / (1 + e^(−1)).
    const lr = new Logistic(
      { features: [nominal('v', ['a', 'b', 'c'])] },
      { learningRate: 0.5, rateDecay: 0, l2: 0 },
    );
    lr.ensureClasses(2);
    const row = new Float64Array([1]);
    const out = new Float64Array(2);
    expect(lr.scoreTrain(row, 0, 0, 1, out, 0)).toBe(0);
    expect(out[0]).toBe(0.5);
    lr.score(row, 0, out, 0);
    expect(out[0]).toBeCloseTo(1 / (1 + Math.exp(-1)), 15);
  });

  it('a weight of 2 takes the step of two rows at the first-order rate', () => {
    const schema = { features: [nominal('v', ['a', 'b'])] };
    const once = new Logistic(schema, { learningRate: 0.1, rateDecay: 0, l2: 0 });
    const doubled = new Logistic(schema, { learningRate: 0.2, rateDecay: 0, l2: 0 });
    const row = new Float64Array([0]);
    once.train(row, 0, 1, 2);
    doubled.train(row, 0, 1, 1);
    const p = new Float64Array(2);
    const q = new Float64Array(2);
    once.score(row, 0, p, 0);
    doubled.score(row, 0, q, 0);
    expect(p[1]).toBeCloseTo(q[1]!, 15);
  });

  it('refuses bad options by name', () => {
    const schema = { features: [nominal('v', ['a'])] };
    expect(() => new Logistic(schema, { learningRate: 0 })).toThrow(/learningRate/);
    expect(() => new Logistic(schema, { rateDecay: -1 })).toThrow(/rateDecay/);
    expect(() => new Logistic(schema, { l2: Number.NaN })).toThrow(/l2/);
  });
});
