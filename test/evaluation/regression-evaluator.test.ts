import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { Rng, ShoalError } from '../../src/core/index.js';
import {
  type EvaluatorSnapshot,
  RegressionEvaluator,
  type RegressionView,
} from '../../src/evaluation/index.js';
import { expectClose } from './reference.js';

/**
 * MAE, RMSE and R² straight from their textbook definitions (e.g. Draper & Smith, Applied Regression
 * Analysis, 3rd ed., 1998, from memory), with weights selecting a view as in Gama, Sebastião &
 * Rodrigues, Machine Learning 90, 2013: e = y − ŷ, MAE = Σw|e|/Σw, RMSE = √(Σw e²/Σw),
 * R² = 1 − Σw e² / Σw (y − ȳ)² with ȳ = Σw y/Σw (two passes).
 */
function directRegression(
  pairs: readonly (readonly [number, number])[],
  weight: (k: number) => number,
): { rows: number; mae: number; rmse: number; r2: number } {
  let n = 0;
  let sy = 0;
  pairs.forEach(([, y], k) => {
    n += weight(k);
    sy += weight(k) * y;
  });
  const mean = sy / n;
  let abs = 0;
  let sq = 0;
  let spread = 0;
  pairs.forEach(([yhat, y], k) => {
    const w = weight(k);
    abs += w * Math.abs(y - yhat);
    sq += w * (y - yhat) ** 2;
    spread += w * (y - mean) ** 2;
  });
  return { rows: n, mae: abs / n, rmse: Math.sqrt(sq / n), r2: spread > 0 ? 1 - sq / spread : Number.NaN };
}

function expectRegressionView(
  view: RegressionView,
  want: ReturnType<typeof directRegression>,
  tolerance = 1e-9,
): void {
  expectClose(view.rows(), want.rows, tolerance, 'rows');
  expectClose(view.mae(), want.mae, tolerance, 'mae');
  expectClose(view.rmse(), want.rmse, tolerance, 'rmse');
  expectClose(view.r2(), want.r2, tolerance, 'r2');
}

function randomPairs(count: number, seed: number, offset = 0): [number, number][] {
  const rng = new Rng(seed);
  return Array.from({ length: count }, () => {
    const y = offset + 10 * rng.normal();
    return [y + rng.normal(), y];
  });
}

const grid = (min: number, max: number) => fc.integer({ min, max }).map((v) => v / 8);

describe('regression evaluator', () => {
  it('gives MAE, RMSE and R² of a small example computed by hand', () => {
    // predictions 2.5, 0, 2, 8 for targets 3, −0.5, 2, 7; errors y − ŷ = 0.5, −0.5, 0, −1
    //   MAE = (0.5 + 0.5 + 0 + 1)/4 = 0.5
    //   RMSE = √((0.25 + 0.25 + 0 + 1)/4) = √0.375 = 0.6123724
    //   ȳ = 11.5/4 = 2.875; Σ(y − ȳ)² = 0.125² + 3.375² + 0.875² + 4.125² = 29.1875
    //   R² = 1 − 1.5/29.1875 = 0.9486081
    const e = new RegressionEvaluator();
    for (const [yhat, y] of [
      [2.5, 3],
      [0, -0.5],
      [2, 2],
      [8, 7],
    ] as const) {
      e.record(yhat, y);
    }
    expect(e.cumulative.mae()).toBeCloseTo(0.5, 14);
    expect(e.cumulative.rmse()).toBeCloseTo(Math.sqrt(0.375), 14);
    expect(e.cumulative.r2()).toBeCloseTo(1 - 1.5 / 29.1875, 14);
    expect(e.summary().cumulative.r2).toBeCloseTo(0.9486081, 7);
  });

  it('windowed view equals the metrics recomputed over the last w records (property)', () => {
    fc.assert(
      fc.property(
        // Values on a grid of 1/8 (exact sums; no subnormal underflow), few distinct targets so that
        // windows of identical targets (no R²) occur often.
        fc.array(fc.tuple(grid(-800, 800), grid(-24, 24)), { minLength: 1, maxLength: 50 }),
        fc.integer({ min: 1, max: 10 }),
        (pairs, w) => {
          const e = new RegressionEvaluator({ window: w });
          pairs.forEach(([yhat, y], i) => {
            e.record(yhat, y);
            const seen = pairs.slice(0, i + 1);
            expectRegressionView(
              e.windowed,
              directRegression(seen, (k) => (k > i - w ? 1 : 0)),
              1e-7,
            );
            expectRegressionView(
              e.cumulative,
              directRegression(seen, () => 1),
              1e-7,
            );
          });
        },
      ),
      { seed: 20261203, numRuns: 150 },
    );
  });

  it('windowed R² stays exact over a long stream with a large offset', () => {
    // Targets near 10⁶ with spread 10: taking records out of a running variance loses digits; the
    // window is rebuilt from its ring each time it wraps, so R² stays equal to the two-pass value.
    const pairs = randomPairs(30_000, 3, 1e6);
    const e = new RegressionEvaluator({ window: 1000 });
    for (const [yhat, y] of pairs) e.record(yhat, y);
    const n = pairs.length;
    expectRegressionView(
      e.windowed,
      directRegression(pairs, (k) => (k >= n - 1000 ? 1 : 0)),
      1e-9,
    );
    expectRegressionView(
      e.cumulative,
      directRegression(pairs, () => 1),
      1e-9,
    );
  });

  it('each time the window wraps it is rebuilt: bit-identical to a fresh count of its w records', () => {
    // Taking records out leaves rounding behind; the rebuild every w records bounds it (the
    // window definition of Gama et al. 2013 is a plain sum over the last w records).
    const w = 64;
    const pairs = randomPairs(w * 40, 21, 1e5);
    const e = new RegressionEvaluator({ window: w });
    pairs.forEach(([yhat, y], i) => {
      e.record(yhat, y);
      if ((i + 1) % w === 0 && i + 1 > w) {
        const fresh = new RegressionEvaluator({ window: w });
        for (const [a, b] of pairs.slice(i + 1 - w, i + 1)) fresh.record(a, b);
        expect(e.summary().windowed).toEqual(fresh.summary().cumulative);
      }
    });
  });

  it('fading view matches the definition (record k of n weighs α^(n−1−k))', () => {
    // Gama et al. 2013 fading factor; α = 0.5 crosses the internal rescaling point many times.
    for (const alpha of [0.5, 0.99]) {
      const pairs = randomPairs(5000, 8);
      const e = new RegressionEvaluator({ fading: alpha });
      for (const [yhat, y] of pairs) e.record(yhat, y);
      const n = pairs.length;
      expectRegressionView(
        e.faded,
        directRegression(pairs, (k) => alpha ** (n - 1 - k)),
        1e-9,
      );
    }
  });

  it('a window of identical targets has no R², even after cancelling a removal', () => {
    // Taking 422.2869131706488 out of the running spread of (422.28…, 0.1, 0.1) leaves a rounding
    // residue of about 3e-11 instead of 0 (measured); R² = 1 − Σe²/Σ(y − ȳ)² is undefined for identical
    // targets, and must not become 1 − 0.02/3e-11.
    const e = new RegressionEvaluator({ window: 2 });
    e.record(400, 422.2869131706488);
    e.record(0, 0.1);
    e.record(0.2, 0.1);
    expect(e.windowed.rows()).toBe(2);
    expect(e.windowed.r2()).toBeNaN();
    expect(e.windowed.rmse()).toBeCloseTo(Math.sqrt(0.02 / 2), 9);
    e.record(0.3, 0.2);
    expectClose(e.windowed.r2(), 1 - (0.01 + 0.01) / 0.005, 1e-6, 'r2 once the targets differ');
  });

  it('a window of one has no R² (one target has no spread) but keeps MAE', () => {
    const e = new RegressionEvaluator({ window: 1 });
    e.record(1, 2);
    e.record(5, 3);
    expect(e.windowed.rows()).toBe(1);
    expect(e.windowed.mae()).toBe(2);
    expect(e.windowed.r2()).toBeNaN();
    expect(e.summary().windowed.r2).toBeNull();
  });

  it('a snapshot taken through JSON continues identically', () => {
    const pairs = randomPairs(3000, 12, 50);
    const e = new RegressionEvaluator({ window: 300, fading: 0.7 });
    for (const [yhat, y] of pairs.slice(0, 1111)) e.record(yhat, y);
    const copy = RegressionEvaluator.restore(JSON.parse(JSON.stringify(e.snapshot())) as EvaluatorSnapshot);
    for (const [yhat, y] of pairs.slice(1111)) {
      e.record(yhat, y);
      copy.record(yhat, y);
    }
    expect(JSON.stringify(copy.summary())).toBe(JSON.stringify(e.summary()));
    expect(JSON.stringify(copy.snapshot())).toBe(JSON.stringify(e.snapshot()));
    e.reset();
    expect(e.rows).toBe(0);
    expect(e.summary().cumulative.mae).toBeNull();
  });

  it('rejects bad parameters, values and snapshots with a ShoalError naming them', () => {
    expect(() => new RegressionEvaluator({ window: 0 })).toThrow(/window/);
    expect(() => new RegressionEvaluator({ fading: 2 })).toThrow(/fading/);
    const e = new RegressionEvaluator();
    expect(() => e.record(1, Number.NaN)).toThrow(ShoalError);
    expect(() => e.record(1, Number.POSITIVE_INFINITY)).toThrow(/target/);
    expect(() => e.record(Number.NaN, 1)).toThrow(/predicted/);
    e.record(1, 2);
    const good = e.snapshot();
    expect(() => RegressionEvaluator.restore({ ...good, kind: 'classification-evaluator' })).toThrow(
      /classification-evaluator/,
    );
    const views = (good.state as { views: { fading: { unit: number } } }).views;
    const broken = { ...good, state: { views: { ...views, fading: { ...views.fading, unit: -1 } } } };
    expect(() => RegressionEvaluator.restore(broken)).toThrow(/unit/);
  });
});
