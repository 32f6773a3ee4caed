import { describe, expect, it } from 'vitest';
import {
  type FeatureSchema,
  nominal,
  numeric,
  numericSchema,
  Rng,
  ShoalError,
} from '../../src/core/index.js';
import type { LearnerSnapshot } from '../../src/learners/learner.js';
import { LinearRegression } from '../../src/learners/linear-regression.js';
import { note } from '../support/note.js';
import { describeRegressorContract } from '../support/regressor-contract.js';
import { friedman1 } from '../support/regressor-streams.js';

describeRegressorContract({
  name: 'linear-regression',
  make: (schema, seed) => new LinearRegression(schema, {}, seed),
  restore: (snapshot) => LinearRegression.restore(snapshot),
});

/** Solve A x = b by Gaussian elimination with partial pivoting (textbook; A is copied). */
function solve(matrix: readonly Float64Array[], rhs: Float64Array): Float64Array {
  const n = rhs.length;
  const a = matrix.map((r) => r.slice());
  const b = rhs.slice();
  for (let k = 0; k < n; k++) {
    let pivot = k;
    for (let r = k + 1; r < n; r++) if (Math.abs(a[r]![k]!) > Math.abs(a[pivot]![k]!)) pivot = r;
    [a[k], a[pivot]] = [a[pivot]!, a[k]!];
    [b[k], b[pivot]] = [b[pivot]!, b[k]!];
    for (let r = k + 1; r < n; r++) {
      const f = a[r]![k]! / a[k]![k]!;
      for (let q = k; q < n; q++) a[r]![q]! -= f * a[k]![q]!;
      b[r]! -= f * b[k]!;
    }
  }
  const x = new Float64Array(n);
  for (let k = n - 1; k >= 0; k--) {
    let s = b[k]!;
    for (let q = k + 1; q < n; q++) s -= a[k]![q]! * x[q]!;
    x[k] = s / a[k]![k]!;
  }
  return x;
}

/**
 * Least squares through the normal equations (XᵀX + penalty·diag) β = Xᵀy, X given row by row by
 * `design`; `penalised[j]` says which columns the ridge penalty applies to (Hoerl & Kennard 1970).
 */
function leastSquares(
  count: number,
  columns: number,
  design: (i: number, out: Float64Array) => void,
  targets: Float64Array,
  penalty = 0,
  penalised: readonly boolean[] = [],
): Float64Array {
  const xtx = Array.from({ length: columns }, () => new Float64Array(columns));
  const xty = new Float64Array(columns);
  const x = new Float64Array(columns);
  for (let i = 0; i < count; i++) {
    design(i, x);
    for (let a = 0; a < columns; a++) {
      xty[a]! += x[a]! * targets[i]!;
      for (let b = 0; b < columns; b++) xtx[a]![b]! += x[a]! * x[b]!;
    }
  }
  for (let j = 0; j < columns; j++) if (penalised[j]) xtx[j]![j]! += count * penalty;
  return solve(xtx, xty);
}

/** Column means and population standard deviations of a row-major block. */
function columnStats(rows: Float64Array, width: number): { mean: Float64Array; sd: Float64Array } {
  const n = rows.length / width;
  const mean = new Float64Array(width);
  const sd = new Float64Array(width);
  for (let i = 0; i < n; i++) for (let j = 0; j < width; j++) mean[j]! += rows[i * width + j]! / n;
  for (let i = 0; i < n; i++)
    for (let j = 0; j < width; j++) sd[j]! += (rows[i * width + j]! - mean[j]!) ** 2 / n;
  for (let j = 0; j < width; j++) sd[j] = Math.sqrt(sd[j]!);
  return { mean, sd };
}

/** A seeded linear model on features of very different scales: y = 2 + 3x₀ − 0.5x₁ + 4x₂ + 0·x₃ + N(0, σ²). */
const TRUE_INTERCEPT = 2;
const TRUE_WEIGHTS = [3, -0.5, 4, 0];
function linearBlock(
  count: number,
  seed: number,
  sigma: number,
): { rows: Float64Array; targets: Float64Array } {
  const rng = new Rng(seed);
  const rows = new Float64Array(count * 4);
  const targets = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    const o = i * 4;
    rows[o] = rng.next();
    rows[o + 1] = 50 + 10 * rng.normal();
    rows[o + 2] = -3 + 0.1 * rng.normal();
    rows[o + 3] = 100 * rng.normal();
    let y = TRUE_INTERCEPT;
    for (let j = 0; j < 4; j++) y += TRUE_WEIGHTS[j]! * rows[o + j]!;
    targets[i] = y + sigma * rng.normal();
  }
  return { rows, targets };
}

describe('linear-regression against least squares', () => {
  it('recovers the coefficients of a seeded linear model and agrees with ordinary least squares', () => {
    const n = 20_000;
    const sigma = 0.5;
    const { rows, targets } = linearBlock(n, 3, sigma);
    const model = new LinearRegression(numericSchema(4), { rateDecay: 0.01 });
    for (let i = 0; i < n; i++) model.train(rows, i * 4, targets[i]!, 1);
    const ols = leastSquares(
      n,
      5,
      (i, x) => {
        x[0] = 1;
        x.set(rows.subarray(i * 4, i * 4 + 4), 1);
      },
      targets,
    );
    const { sd } = columnStats(rows, 4);
    const { weights } = model.coefficients();
    // Compare on the standardised scale, where the OLS standard error of every coefficient is
    // σ/√n (the inputs are uncorrelated by construction): SGD must land within 3 standard errors of
    // the OLS estimate, and both within 4 of the true coefficient (common practice for seeded checks).
    const se = sigma / Math.sqrt(n);
    for (let j = 0; j < 4; j++) {
      const sgd = weights[j]! * sd[j]!;
      const exact = ols[j + 1]! * sd[j]!;
      const truth = TRUE_WEIGHTS[j]! * sd[j]!;
      note(`x${j}: sgd ${weights[j]!.toFixed(4)}, ols ${ols[j + 1]!.toFixed(4)}, true ${TRUE_WEIGHTS[j]}`);
      expect(Math.abs(sgd - exact)).toBeLessThan(3 * se);
      expect(Math.abs(exact - truth)).toBeLessThan(4 * se);
      expect(Math.abs(sgd - truth)).toBeLessThan(5 * se);
    }
    // Predictions agree with the OLS fit well inside the noise on fresh rows.
    const fresh = linearBlock(1000, 4, sigma);
    let worst = 0;
    for (let i = 0; i < 1000; i++) {
      let exact = ols[0]!;
      for (let j = 0; j < 4; j++) exact += ols[j + 1]! * fresh.rows[i * 4 + j]!;
      worst = Math.max(worst, Math.abs(model.predict(fresh.rows, i * 4) - exact));
    }
    note(`largest |sgd − ols| prediction gap on 1,000 fresh rows: ${worst.toFixed(4)} (σ = ${sigma})`);
    expect(worst).toBeLessThan(0.1 * sigma);
  });

  it('with one-hot nominal features predicts as ordinary least squares with dummy coding', () => {
    // For λ = 0 the fitted values of least squares do not depend on how a nominal feature is coded,
    // so our one-hot model must match OLS with treatment (drop-first) dummies (any regression text).
    const schema: FeatureSchema = { features: [numeric('x'), nominal('c', ['a', 'b', 'c'])] };
    const rng = new Rng(21);
    const n = 20_000;
    const rows = new Float64Array(2 * n);
    const targets = new Float64Array(n);
    const offsets = [0, 5, -3];
    for (let i = 0; i < n; i++) {
      const c = rng.int(3);
      rows[2 * i] = 10 + 4 * rng.normal();
      rows[2 * i + 1] = c;
      targets[i] = 1.5 * rows[2 * i]! + offsets[c]! + rng.normal();
    }
    const model = new LinearRegression(schema, { rateDecay: 0.01 });
    for (let i = 0; i < n; i++) model.train(rows, 2 * i, targets[i]!, 1);
    const ols = leastSquares(
      n,
      4,
      (i, x) => {
        x[0] = 1;
        x[1] = rows[2 * i]!;
        x[2] = rows[2 * i + 1] === 1 ? 1 : 0;
        x[3] = rows[2 * i + 1] === 2 ? 1 : 0;
      },
      targets,
    );
    const probe = new Float64Array(2);
    for (const c of [0, 1, 2]) {
      for (const x of [4, 10, 16]) {
        probe[0] = x;
        probe[1] = c;
        const exact = ols[0]! + ols[1]! * x + (c === 1 ? ols[2]! : c === 2 ? ols[3]! : 0);
        expect(Math.abs(model.predict(probe, 0) - exact)).toBeLessThan(0.1);
      }
    }
  });

  it('with an L2 penalty settles on the ridge solution of the standardised inputs (Hoerl & Kennard 1970)', () => {
    const n = 40_000;
    const lambda = 0.25;
    const { rows, targets } = linearBlock(n, 5, 0.5);
    const model = new LinearRegression(numericSchema(4), { rateDecay: 0.01, l2: lambda });
    for (let i = 0; i < n; i++) model.train(rows, i * 4, targets[i]!, 1);
    // The running mean and population sd after n rows are the sample ones, so the closed form uses
    // the same standardisation: minimise (1/2n) Σ (y − ȳ − β·z)² + (λ/2)‖β‖².
    const { mean, sd } = columnStats(rows, 4);
    let yMean = 0;
    for (const y of targets) yMean += y / n;
    const centred = targets.map((y) => y - yMean);
    const ridge = leastSquares(
      n,
      4,
      (i, z) => {
        for (let j = 0; j < 4; j++) z[j] = (rows[i * 4 + j]! - mean[j]!) / sd[j]!;
      },
      centred,
      lambda,
      [true, true, true, true],
    );
    const { weights } = model.coefficients();
    for (let j = 0; j < 4; j++) {
      const sgd = weights[j]! * sd[j]!;
      note(
        `z${j}: sgd ${sgd.toFixed(4)}, ridge ${ridge[j]!.toFixed(4)}, unpenalised ${(TRUE_WEIGHTS[j]! * sd[j]!).toFixed(4)}`,
      );
      // The tolerance is about 4 standard deviations of the SGD noise left at the last step, whose
      // variance is near (step · residual variance / 2) (the stationary variance of LMS, Widrow &
      // Stearns, Adaptive Signal Processing, 1985, from memory): 4 · √(6e-5 · 1.3 / 2) ≈ 0.025.
      expect(Math.abs(sgd - ridge[j]!)).toBeLessThan(0.025);
    }
    // λ = 0.25 on unit-variance, uncorrelated inputs shrinks each standardised slope by 1/(1 + λ),
    // a full unit for x₁ (−5 → −4): clearly not the least-squares answer.
    expect(Math.abs(weights[1]! * sd[1]! - (-0.5 * sd[1]!) / 1.25)).toBeLessThan(0.05);
  });

  it('learns the linear part of Friedman #1 with its default options', () => {
    // Friedman (Annals of Statistics 1991): y = 10 sin(πx₁x₂) + 20(x₃ − ½)² + 10x₄ + 5x₅ + ε with
    // independent uniform inputs. The best linear predictor therefore puts exactly 10 on x₄ and 5 on
    // x₅ (the other terms do not involve them), 0 on x₃ (the parabola is symmetric about ½) and 0 on
    // the five irrelevant inputs [derived from the definition].
    const block = friedman1(50_000, 7);
    const model = new LinearRegression(block.schema);
    for (let i = 0; i < 50_000; i++) model.train(block.rows, i * 10, block.targets[i]!, 1);
    const { weights } = model.coefficients();
    note(`Friedman #1 linear fit: ${Array.from(weights, (w) => w.toFixed(2)).join(', ')}`);
    // Tolerance: the default rate ends near 2e-4 per row, leaving SGD noise of sd ≈ √(2e-4 · 6.7 / 2)
    // per standardised slope (residual variance of the linear fit ≈ 6.7), ≈ 0.09 in raw units for
    // U(0, 1) inputs (sd 0.289); 0.4 is over 4 of those.
    expect(Math.abs(weights[3]! - 10)).toBeLessThan(0.4);
    expect(Math.abs(weights[4]! - 5)).toBeLessThan(0.4);
    for (const j of [2, 5, 6, 7, 8, 9]) expect(Math.abs(weights[j]!)).toBeLessThan(0.4);
  });
});

describe('linear-regression inputs and options', () => {
  it('treats a missing numeric value as the running mean and a missing category as no category', () => {
    const schema: FeatureSchema = { features: [numeric('x0'), numeric('x1'), nominal('c', 3)] };
    const model = new LinearRegression(schema);
    const rng = new Rng(8);
    const row = new Float64Array(3);
    let sum = 0;
    let count = 0;
    for (let i = 0; i < 2000; i++) {
      row[0] = rng.next();
      row[1] = rng.next() < 0.2 ? Number.NaN : 5 + rng.normal();
      row[2] = rng.int(3);
      if (!Number.isNaN(row[1]!)) {
        sum += row[1]!;
        count++;
      }
      model.train(row, 0, 2 * row[0]! + (Number.isNaN(row[1]!) ? 5 : row[1]!) + row[2]!, 1);
    }
    const missing = new Float64Array([0.3, Number.NaN, 1]);
    const atMean = new Float64Array([0.3, sum / count, 1]);
    expect(model.predict(missing, 0)).toBeCloseTo(model.predict(atMean, 0), 9);
    // A code outside 0 … 2 counts as missing too; an infinite value is refused (see the contract suite).
    const noCategory = model.predict(new Float64Array([0.3, 5, Number.NaN]), 0);
    expect(model.predict(new Float64Array([0.3, 5, 3]), 0)).toBe(noCategory);
    expect(model.predict(new Float64Array([0.3, 5, 1.5]), 0)).toBe(noCategory);
  });

  it('refuses bad options with a ShoalError naming the option', () => {
    const schema = numericSchema(2);
    for (const [options, pattern] of [
      [{ learningRate: 0 }, /learningRate/],
      [{ learningRate: Number.NaN }, /learningRate/],
      [{ rateDecay: -1 }, /rateDecay/],
      [{ l2: Number.POSITIVE_INFINITY }, /l2/],
    ] as const) {
      let thrown: unknown;
      try {
        new LinearRegression(schema, options);
      } catch (e) {
        thrown = e;
      }
      expect(thrown).toBeInstanceOf(ShoalError);
      expect((thrown as ShoalError).code).toBe('invalid-parameter');
      expect((thrown as ShoalError).message).toMatch(pattern);
    }
  });

  it('refuses a snapshot whose model does not fit its schema', () => {
    const snapshot = new LinearRegression(numericSchema(2)).snapshot();
    const wider: LearnerSnapshot = { ...snapshot, schema: numericSchema(3) };
    expect(() => LinearRegression.restore(wider)).toThrow(/the model holds/);
  });
});
