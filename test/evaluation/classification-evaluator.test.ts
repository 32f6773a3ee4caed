import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import {
  ClassificationEvaluator,
  type ClassificationView,
  type EvaluatorSnapshot,
} from '../../src/evaluation/index.js';
import { expectShoalError } from '../support/errors.js';
import { type DirectFigures, direct, expectClose, type Outcome } from './reference.js';

/** Compare every figure of a view with the direct computation over the same weighted records. */
function expectView(view: ClassificationView, want: DirectFigures, tolerance = 1e-9): void {
  expectClose(view.rows(), want.rows, tolerance, 'rows');
  expectClose(view.accuracy(), want.accuracy, tolerance, 'accuracy');
  expectClose(view.kappa(), want.kappa, tolerance, 'kappa');
  expectClose(view.kappaM(), want.kappaM, tolerance, 'kappaM');
  expectClose(view.kappaNoChange(), want.kappaNoChange, tolerance, 'kappaNoChange');
  expectClose(view.logLoss(), want.logLoss, tolerance, 'logLoss');
  expectClose(view.macroF1(), want.macroF1, tolerance, 'macroF1');
  for (let k = 0; k < want.precision.length; k++) {
    expectClose(view.precision(k), want.precision[k]!, tolerance, `precision ${k}`);
    expectClose(view.recall(k), want.recall[k]!, tolerance, `recall ${k}`);
    for (let j = 0; j < want.precision.length; j++) {
      expectClose(view.count(k, j), want.confusion[k]![j]!, tolerance, `cell ${k},${j}`);
    }
  }
}

/** A seeded stream of outcomes over `classes` classes, right about 70% of the time. */
function randomOutcomes(count: number, classes: number, seed: number): Outcome[] {
  const rng = new Rng(seed);
  return Array.from({ length: count }, () => {
    const label = rng.int(classes);
    const predicted = rng.next() < 0.7 ? label : rng.int(classes);
    return { label, predicted, p: rng.next() };
  });
}

function feed(evaluator: ClassificationEvaluator, outcomes: readonly Outcome[]): void {
  for (const o of outcomes) evaluator.record(o.predicted, o.label, o.p);
}

const outcome = fc.record({
  label: fc.integer({ min: 0, max: 3 }),
  predicted: fc.integer({ min: 0, max: 3 }),
  p: fc.double({ min: 0, max: 1, noNaN: true }),
});

describe('classification evaluator: the three prequential views (Gama, Sebastião & Rodrigues 2013)', () => {
  it('windowed view equals the metrics recomputed over the last w records (property)', () => {
    // Definition of the windowed prequential error, Gama et al., Machine Learning 90, 2013:
    // P_w(i) = (1/w) Σ over the last w records; every figure of the window is taken over those records.
    fc.assert(
      fc.property(
        fc.array(outcome, { minLength: 1, maxLength: 60 }),
        fc.integer({ min: 1, max: 12 }),
        (outcomes, w) => {
          const evaluator = new ClassificationEvaluator({ window: w });
          evaluator.ensureClasses(4);
          outcomes.forEach((o, i) => {
            evaluator.record(o.predicted, o.label, o.p);
            const seen = outcomes.slice(0, i + 1);
            expectView(
              evaluator.windowed,
              direct(seen, (k) => (k > i - w ? 1 : 0), 4),
            );
            expectView(
              evaluator.cumulative,
              direct(seen, () => 1, 4),
            );
          });
        },
      ),
      { seed: 20261202, numRuns: 150 },
    );
  });

  it('windowed view stays equal to the recomputation over a long seeded stream', () => {
    const outcomes = randomOutcomes(20_000, 5, 11);
    const evaluator = new ClassificationEvaluator({ window: 997 });
    feed(evaluator, outcomes);
    const n = outcomes.length;
    expectView(
      evaluator.windowed,
      direct(outcomes, (k) => (k >= n - 997 ? 1 : 0), 5),
      1e-12,
    );
    expectView(
      evaluator.cumulative,
      direct(outcomes, () => 1, 5),
      1e-12,
    );
  });

  it('each time the window wraps its log-loss sum is rebuilt, bit-identical to a fresh count', () => {
    const w = 50;
    const outcomes = randomOutcomes(w * 30, 3, 17);
    const evaluator = new ClassificationEvaluator({ window: w });
    outcomes.forEach((o, i) => {
      evaluator.record(o.predicted, o.label, o.p);
      if ((i + 1) % w === 0) {
        const fresh = new ClassificationEvaluator({ window: w });
        feed(fresh, outcomes.slice(i + 1 - w, i + 1));
        expect(evaluator.windowed.logLoss()).toBe(fresh.cumulative.logLoss());
        expect(evaluator.summary().windowed.confusion).toEqual(fresh.summary().cumulative.confusion);
      }
    });
  });

  it('fading view matches the definition on a hand example (α = 0.5)', () => {
    // Gama et al. 2013, fading factor: S_α(i) = L_i + α S_α(i−1), N_α(i) = 1 + α N_α(i−1).
    // Records (label, predicted): (0,0) (1,0) (1,1) (0,0); 0/1 losses L = 0, 1, 0, 0.
    //   S: 0, 1, 0.5, 0.25        N: 1, 1.5, 1.75, 1.875
    //   faded error 0.25/1.875 = 2/15, faded accuracy 13/15
    // Weights at i = 4: 1/8, 1/4, 1/2, 1. Faded matrix: [0][0] = 1/8 + 1 = 1.125, [1][0] = 0.25,
    //   [1][1] = 0.5; rows (1.125, 0.75), columns (1.375, 0.5).
    //   p_c = (1.125·1.375 + 0.75·0.5)/1.875² = (123/64)/(225/64) = 41/75, κ = (65 − 41)/(75 − 41) = 12/17
    //   majority row 1.125/1.875 = 9/15: κ-M = (13 − 9)/(15 − 9) = 2/3
    //   no-change hits: only record 3 (1 after 1), weight 0.5: p_nc = 0.5/1.875 = 4/15,
    //   κ vs no-change = (13 − 4)/(15 − 4) = 9/11
    const records = [
      [0, 0],
      [1, 0],
      [1, 1],
      [0, 0],
    ] as const;
    const evaluator = new ClassificationEvaluator({ fading: 0.5 });
    let s = 0;
    let nAlpha = 0;
    for (const [label, predicted] of records) {
      evaluator.record(predicted, label, 0.5);
      s = (label === predicted ? 0 : 1) + 0.5 * s;
      nAlpha = 1 + 0.5 * nAlpha;
      expect(evaluator.faded.accuracy()).toBeCloseTo(1 - s / nAlpha, 14);
    }
    const f = evaluator.faded;
    expect(f.rows()).toBeCloseTo(1.875, 14);
    expect(f.accuracy()).toBeCloseTo(13 / 15, 14);
    expect(f.kappa()).toBeCloseTo(12 / 17, 14);
    expect(f.kappaM()).toBeCloseTo(2 / 3, 14);
    expect(f.kappaNoChange()).toBeCloseTo(9 / 11, 14);
    expect(f.count(0, 0)).toBeCloseTo(1.125, 14);
    expect(f.count(1, 0)).toBeCloseTo(0.25, 14);
    expect(evaluator.summary().faded.confusion).toEqual([
      [1.125, 0],
      [0.25, 0.5],
    ]);
  });

  it('fading view matches the definition over long streams, across its rescaling', () => {
    // Record k of n weighs α^(n−1−k) (Gama et al. 2013). α = 0.5 passes the internal rescaling point
    // every ~256 records, α = 0.97 every ~5,800.
    for (const alpha of [0.5, 0.97]) {
      const outcomes = randomOutcomes(12_000, 4, 23);
      const evaluator = new ClassificationEvaluator({ fading: alpha });
      feed(evaluator, outcomes);
      const n = outcomes.length;
      expectView(
        evaluator.faded,
        direct(outcomes, (k) => alpha ** (n - 1 - k), 4),
        1e-9,
      );
    }
  });

  it('with α = 1 the fading view is the cumulative view, bit for bit', () => {
    const evaluator = new ClassificationEvaluator({ fading: 1, window: 50 });
    feed(evaluator, randomOutcomes(3000, 3, 5));
    const { cumulative, faded } = evaluator.summary();
    expect(faded).toEqual(cumulative);
  });

  it('grows the confusion matrix when a class appears', () => {
    const evaluator = new ClassificationEvaluator({ window: 3 });
    evaluator.record(0, 0, 0.9);
    evaluator.record(1, 0, 0.4);
    expect(evaluator.classes).toBe(2);
    evaluator.record(4, 2, 0.1);
    expect(evaluator.classes).toBe(5);
    const s = evaluator.summary();
    expect(s.cumulative.confusion).toEqual([
      [1, 1, 0, 0, 0],
      [0, 0, 0, 0, 0],
      [0, 0, 0, 0, 1],
      [0, 0, 0, 0, 0],
      [0, 0, 0, 0, 0],
    ]);
    expect(s.cumulative.precision).toEqual([1, 0, null, null, 0]);
    expect(s.cumulative.recall).toEqual([0.5, null, 0, null, null]);
    // The summary is plain JSON: undefined figures are null, not NaN.
    expect(JSON.parse(JSON.stringify(s))).toEqual(s);
    // Macro F1 averages the classes that occur (0, 1, 2, 4): F1 = 2/3, 0, 0, 0.
    expect(evaluator.cumulative.macroF1()).toBeCloseTo(2 / 3 / 4, 14);
    evaluator.ensureClasses(7);
    expect(evaluator.summary().windowed.confusion.length).toBe(7);
  });

  it('log-loss matches a direct computation, with the probability floor', () => {
    // Log-loss = mean of −ln p(true class) (the logarithmic scoring rule, Good, "Rational decisions",
    // JRSS B 14, 1952, from memory), p clipped to [ε, 1].
    const evaluator = new ClassificationEvaluator();
    const ps = [0.9, 0.2, 0.6, 0, 1];
    for (const p of ps) evaluator.record(0, 0, p);
    const want = -(Math.log(0.9) + Math.log(0.2) + Math.log(0.6) + Math.log(1e-15) + Math.log(1)) / 5;
    expect(evaluator.cumulative.logLoss()).toBeCloseTo(want, 12);

    const coarse = new ClassificationEvaluator({ probabilityFloor: 1e-3 });
    coarse.record(1, 0, 0);
    coarse.record(0, 0, 1 + 1e-12);
    expect(coarse.cumulative.logLoss()).toBeCloseTo(-Math.log(1e-3) / 2, 12);
  });

  it('records from a served distribution: argmax prediction, probability of the label', () => {
    const a = new ClassificationEvaluator();
    const b = new ClassificationEvaluator();
    const served = new Float64Array([9, 9, 0.2, 0.5, 0.3, 9]);
    a.recordDistribution(served, 2, 3, 2);
    b.record(1, 2, 0.3);
    a.recordDistribution(served, 2, 3, 4);
    b.record(1, 4, 0);
    expect(a.summary()).toEqual(b.summary());
  });

  it('a snapshot taken through JSON continues identically', () => {
    const outcomes = randomOutcomes(4000, 4, 31);
    const evaluator = new ClassificationEvaluator({ window: 250, fading: 0.6 });
    feed(evaluator, outcomes.slice(0, 1210));
    const saved = JSON.parse(JSON.stringify(evaluator.snapshot())) as EvaluatorSnapshot;
    const copy = ClassificationEvaluator.restore(saved);
    expect(copy.summary()).toEqual(evaluator.summary());
    for (const part of [outcomes.slice(1210, 1300), outcomes.slice(1300)]) {
      feed(evaluator, part);
      feed(copy, part);
      expect(JSON.stringify(copy.summary())).toBe(JSON.stringify(evaluator.summary()));
    }
    expect(JSON.stringify(copy.snapshot())).toBe(JSON.stringify(evaluator.snapshot()));
  });

  it('reset forgets every record but keeps the known classes', () => {
    const evaluator = new ClassificationEvaluator({ window: 10 });
    feed(evaluator, randomOutcomes(100, 3, 2));
    evaluator.reset();
    expect(evaluator.rows).toBe(0);
    expect(evaluator.summary().cumulative.accuracy).toBeNull();
    const fresh = new ClassificationEvaluator({ window: 10 });
    fresh.ensureClasses(3);
    const more = randomOutcomes(25, 3, 4);
    feed(evaluator, more);
    feed(fresh, more);
    expect(evaluator.summary()).toEqual(fresh.summary());
  });

  it('rejects bad parameters and bad records with a ShoalError naming them', () => {
    for (const window of [0, -1, 1.5, Number.NaN]) {
      expectShoalError(() => new ClassificationEvaluator({ window }), 'invalid-parameter', /window/);
    }
    for (const fading of [0, -0.1, 1.5, Number.NaN]) {
      expectShoalError(() => new ClassificationEvaluator({ fading }), 'invalid-parameter', /fading/);
    }
    for (const probabilityFloor of [0, 1, Number.NaN]) {
      expectShoalError(
        () => new ClassificationEvaluator({ probabilityFloor }),
        'invalid-parameter',
        /probabilityFloor/,
      );
    }
    const e = new ClassificationEvaluator();
    expectShoalError(() => e.record(0, -1, 0.5), 'invalid-label', /label.*-1/);
    expectShoalError(() => e.record(0, 0.5, 0.5), 'invalid-label', /label.*0\.5/);
    expectShoalError(() => e.record(0, 4096, 0.5), 'invalid-label', /label/);
    expectShoalError(() => e.record(Number.NaN, 0, 0.5), 'invalid-input', /predicted.*NaN/);
    expectShoalError(() => e.record(0, 0, 1.5), 'invalid-input', /probabilityOfLabel.*1\.5/);
    expectShoalError(() => e.record(0, 0, -0.1), 'invalid-input', /probabilityOfLabel/);
    expectShoalError(() => e.record(0, 0, Number.NaN), 'invalid-input', /probabilityOfLabel.*NaN/);
    expectShoalError(() => e.recordDistribution(new Float64Array(2), 1, 2, 0), 'invalid-input', /offset 1/);
    expectShoalError(() => e.ensureClasses(-2), 'invalid-parameter', /classes/);
    expectShoalError(() => e.ensureClasses(5000), 'invalid-parameter', /classes/);
    expect(e.rows).toBe(0);
  });

  it('refuses a snapshot of another kind, version or shape', () => {
    const e = new ClassificationEvaluator({ window: 4 });
    feed(e, randomOutcomes(6, 2, 1));
    const good = JSON.parse(JSON.stringify(e.snapshot())) as EvaluatorSnapshot;
    expectShoalError(
      () => ClassificationEvaluator.restore({ ...good, kind: 'regression-evaluator' }),
      'invalid-snapshot',
      /regression-evaluator/,
    );
    expectShoalError(
      () => ClassificationEvaluator.restore({ ...good, version: 99 }),
      'invalid-snapshot',
      /version 99/,
    );
    expectShoalError(
      () => ClassificationEvaluator.restore({ ...good, options: { ...good.options, window: 5 } }),
      'invalid-snapshot',
      /record ring/,
    );
    const state = good.state as { views: { cumulative: { cells: string } } };
    const broken = structuredClone(good) as EvaluatorSnapshot & { state: typeof state };
    broken.state.views.cumulative.cells = 'AAAA';
    expectShoalError(() => ClassificationEvaluator.restore(broken), 'invalid-snapshot', /cells/);
    expectShoalError(
      () => ClassificationEvaluator.restore({ ...good, state: null }),
      'invalid-snapshot',
      /state/,
    );
  });
});
