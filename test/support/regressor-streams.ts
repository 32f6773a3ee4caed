import { type FeatureSchema, nominal, numeric, numericSchema, Rng } from '../../src/core/index.js';
import type { Regressor } from '../../src/learners/learner.js';

/**
 * Seeded regression streams for the regressor tests: rows (row-major), targets and, where the
 * generating function is known, the noise-free target of each row.
 */
export interface RegressionBlock {
  readonly schema: FeatureSchema;
  readonly width: number;
  readonly rows: Float64Array;
  readonly targets: Float64Array;
  /** E[y | x] of each row: the target without its noise. */
  readonly truth: Float64Array;
}

/**
 * Friedman #1 — Friedman, "Multivariate adaptive regression splines", Annals of Statistics 19(1),
 * 1991 (from memory, as the benchmark is usually stated): ten features uniform on [0, 1], of which only
 * the first five matter, y = 10 sin(π x₁ x₂) + 20 (x₃ − 0.5)² + 10 x₄ + 5 x₅ + ε, ε ~ N(0, σ²), σ = 1.
 */
export function friedman1(count: number, seed: number): RegressionBlock {
  const rng = new Rng(seed);
  const width = 10;
  const rows = new Float64Array(count * width);
  const targets = new Float64Array(count);
  const truth = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    const o = i * width;
    for (let j = 0; j < width; j++) rows[o + j] = rng.next();
    const f =
      10 * Math.sin(Math.PI * rows[o]! * rows[o + 1]!) +
      20 * (rows[o + 2]! - 0.5) ** 2 +
      10 * rows[o + 3]! +
      5 * rows[o + 4]!;
    truth[i] = f;
    targets[i] = f + rng.normal();
  }
  return { schema: numericSchema(width), width, rows, targets, truth };
}

/**
 * An invented stream that exercises every input kind: two numeric features (one missing 10% of the
 * time), a nominal feature of four categories (missing 5% of the time) and an irrelevant numeric
 * feature; y = 3 x₀ − 0.5 x₁ + offset[c] + N(0, 0.5²), with x₁ ~ N(50, 10²) far from standard scale.
 */
export function mixedRegression(count: number, seed: number): RegressionBlock {
  const rng = new Rng(seed);
  const schema: FeatureSchema = {
    features: [numeric('x0'), numeric('x1'), nominal('c', ['a', 'b', 'c', 'd']), numeric('noise')],
  };
  const offsets = [0, 4, -2, 7];
  const width = 4;
  const rows = new Float64Array(count * width);
  const targets = new Float64Array(count);
  const truth = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    const o = i * width;
    const x0 = rng.next();
    const x1 = 50 + 10 * rng.normal();
    const c = rng.int(4);
    rows[o] = x0;
    rows[o + 1] = rng.next() < 0.1 ? Number.NaN : x1;
    rows[o + 2] = rng.next() < 0.05 ? Number.NaN : c;
    rows[o + 3] = rng.next();
    truth[i] = 3 * x0 - 0.5 * x1 + offsets[c]!;
    targets[i] = truth[i]! + 0.5 * rng.normal();
  }
  return { schema, width, rows, targets, truth };
}

/**
 * Predict each row, then train on it (the prequential order); returns the predictions. Weights cycle
 * through `weights` so that the weight path is exercised.
 */
export function prequential(
  learner: Regressor,
  block: RegressionBlock,
  from = 0,
  to = block.targets.length,
  weights: readonly number[] = [1],
): Float64Array {
  const out = new Float64Array(to - from);
  for (let i = from; i < to; i++) {
    const o = i * block.width;
    out[i - from] = learner.predict(block.rows, o);
    learner.train(block.rows, o, block.targets[i]!, weights[i % weights.length]!);
  }
  return out;
}

/** Mean squared difference between `a[i]` and `b[from + i]`. */
export function meanSquaredError(a: Float64Array, b: Float64Array, from = 0): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += (a[i]! - b[from + i]!) ** 2;
  return s / a.length;
}
