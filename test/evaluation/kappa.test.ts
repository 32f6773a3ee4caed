import { describe, expect, it } from 'vitest';
import { ClassificationEvaluator, kappaStatistic } from '../../src/evaluation/index.js';

/** Feed a confusion matrix (rows = true class, columns = predicted) as one record per count. */
function feedMatrix(evaluator: ClassificationEvaluator, matrix: readonly (readonly number[])[]): void {
  matrix.forEach((row, label) => {
    row.forEach((count, predicted) => {
      for (let i = 0; i < count; i++) evaluator.record(predicted, label, label === predicted ? 0.8 : 0.1);
    });
  });
}

describe("Cohen's kappa", () => {
  it('reproduces the worked example of Witten & Frank (58/118 = 0.4915)', () => {
    // Witten & Frank, Data Mining, 2nd ed., §5.7: 200 instances, 140 correct, 82 expected by chance,
    // κ = (140 − 82)/(200 − 82) = 58/118 = 0.4915 [seen]. The matrix rows a: 88 10 2, b: 14 40 6,
    // c: 18 10 12 are from memory; they reproduce the published totals: diagonal 88+40+12 = 140,
    // row totals 100, 60, 40, column totals 120, 60, 20, chance 100·120/200 + 60·60/200 + 40·20/200 = 82.
    const evaluator = new ClassificationEvaluator({ window: 200 });
    feedMatrix(evaluator, [
      [88, 10, 2],
      [14, 40, 6],
      [18, 10, 12],
    ]);
    const c = evaluator.cumulative;
    expect(c.rows()).toBe(200);
    expect(c.accuracy()).toBe(140 / 200);
    expect(c.kappa()).toBeCloseTo(58 / 118, 12);
    expect(c.kappa()).toBeCloseTo(0.4915, 4);
    expect(kappaStatistic(140 / 200, 82 / 200)).toBeCloseTo(58 / 118, 12);
    // The window holds the same 200 records.
    expect(evaluator.windowed.kappa()).toBeCloseTo(58 / 118, 12);
    expect(evaluator.summary().cumulative.confusion).toEqual([
      [88, 10, 2],
      [14, 40, 6],
      [18, 10, 12],
    ]);
  });

  it('matches a 2×2 example computed by hand, with precision, recall and macro F1', () => {
    // Hand computation (Cohen 1960 for κ; precision, recall and F1 = 2TP/(2TP+FP+FN), van Rijsbergen
    // 1979, from memory):
    //   true 0: predicted 0 ×20, predicted 1 ×5      row totals    25, 25
    //   true 1: predicted 0 ×10, predicted 1 ×15     column totals 30, 20     n = 50
    //   p₀ = (20 + 15)/50 = 0.7;  p_c = (25·30 + 25·20)/50² = 1250/2500 = 0.5
    //   κ = (0.7 − 0.5)/(1 − 0.5) = 0.4
    //   class 0: precision 20/30 = 2/3, recall 20/25 = 0.8, F1 = 40/55 = 8/11
    //   class 1: precision 15/20 = 0.75, recall 15/25 = 0.6, F1 = 30/45 = 2/3
    //   macro F1 = (8/11 + 2/3)/2 = 23/33
    //   majority class: 25/50 = 0.5, so κ-M = (0.7 − 0.5)/0.5 = 0.4
    const evaluator = new ClassificationEvaluator();
    feedMatrix(evaluator, [
      [20, 5],
      [10, 15],
    ]);
    const c = evaluator.cumulative;
    expect(c.accuracy()).toBeCloseTo(0.7, 14);
    expect(c.kappa()).toBeCloseTo(0.4, 14);
    expect(c.kappaM()).toBeCloseTo(0.4, 14);
    expect(c.precision(0)).toBeCloseTo(2 / 3, 14);
    expect(c.recall(0)).toBeCloseTo(0.8, 14);
    expect(c.precision(1)).toBeCloseTo(0.75, 14);
    expect(c.recall(1)).toBeCloseTo(0.6, 14);
    expect(c.macroF1()).toBeCloseTo(23 / 33, 14);
    const figures = evaluator.summary().cumulative;
    expect(figures.precision).toEqual([c.precision(0), c.precision(1)]);
    expect(figures.recall).toEqual([c.recall(0), c.recall(1)]);
  });

  it('gives κ-M and κ vs no-change of a small stream computed by hand', () => {
    // Definitions: κ-M uses the majority-class classifier's accuracy as p_c (Bifet et al. 2015, from
    // memory); κ vs no-change the no-change classifier's (Žliobaitė et al., Machine Learning 98, 2015,
    // from memory), which predicts the previous label; the first record has none and counts as a miss.
    //   labels      0 0 1 1 1 0 1 1
    //   predictions 0 1 1 1 1 0 0 1
    //   correct     1 0 1 1 1 1 0 1  → p₀ = 6/8 = 0.75
    //   majority class 1 holds 5 of 8 labels → p_m = 5/8, κ-M = (0.75 − 0.625)/0.375 = 1/3
    //   no-change   – 1 0 1 1 0 0 1  → 4 hits of 8, p_nc = 0.5, κ vs no-change = (0.75 − 0.5)/0.5 = 0.5
    //   Cohen: row totals (3, 5), column totals (3, 5): p_c = (9 + 25)/64 = 17/32,
    //          κ = (24/32 − 17/32)/(15/32) = 7/15
    const labels = [0, 0, 1, 1, 1, 0, 1, 1];
    const predictions = [0, 1, 1, 1, 1, 0, 0, 1];
    const evaluator = new ClassificationEvaluator({ window: 8 });
    labels.forEach((label, i) => {
      evaluator.record(predictions[i]!, label, 0.5);
    });
    const c = evaluator.cumulative;
    expect(c.accuracy()).toBe(0.75);
    expect(c.kappaM()).toBeCloseTo(1 / 3, 14);
    expect(c.kappaNoChange()).toBeCloseTo(0.5, 14);
    expect(c.kappa()).toBeCloseTo(7 / 15, 14);
  });

  it('is undefined (NaN, null in summaries) when the reference is perfect', () => {
    // κ = (p₀ − p_c)/(1 − p_c) has no value at p_c = 1: every label and prediction the same class.
    const evaluator = new ClassificationEvaluator();
    for (let i = 0; i < 5; i++) evaluator.record(1, 1, 1);
    expect(evaluator.cumulative.kappa()).toBeNaN();
    expect(evaluator.cumulative.kappaM()).toBeNaN();
    expect(evaluator.summary().cumulative.kappa).toBeNull();
    expect(evaluator.cumulative.accuracy()).toBe(1);
  });
});
