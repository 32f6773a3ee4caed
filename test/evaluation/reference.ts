import { expect } from 'vitest';

/**
 * Direct, unoptimised computations of the evaluation figures from their definitions, written
 * independently of src/evaluation: a weighted confusion matrix built afresh from a list of outcomes,
 * then Cohen's κ (Cohen 1960), κ-M (Bifet et al. 2015, from memory), κ vs no-change (Žliobaitė et al.,
 * Machine Learning 98, 2015, from memory), log-loss, per-class precision/recall and macro F1. The
 * weights select a view (Gama, Sebastião & Rodrigues, Machine Learning 90, 2013): 1 on every record
 * (cumulative), 1 on the last w (window), α^(n−1−k) on record k (fading).
 */
export interface Outcome {
  readonly label: number;
  readonly predicted: number;
  /** Probability the prediction gave to the true label. */
  readonly p: number;
}

export interface DirectFigures {
  rows: number;
  accuracy: number;
  kappa: number;
  kappaM: number;
  kappaNoChange: number;
  logLoss: number;
  macroF1: number;
  precision: number[];
  recall: number[];
  confusion: number[][];
}

export function direct(
  outcomes: readonly Outcome[],
  weight: (k: number) => number,
  classes: number,
  floor = 1e-15,
): DirectFigures {
  const m = Array.from({ length: classes }, () => new Array<number>(classes).fill(0));
  let n = 0;
  let hits = 0;
  let noChange = 0;
  let loss = 0;
  outcomes.forEach((o, k) => {
    const w = weight(k);
    if (w === 0) return;
    m[o.label]![o.predicted]! += w;
    n += w;
    if (o.label === o.predicted) hits += w;
    // The no-change classifier predicts the previous label; the very first record has none.
    if (k > 0 && outcomes[k - 1]!.label === o.label) noChange += w;
    loss += w * -Math.log(Math.min(1, Math.max(floor, o.p)));
  });
  const row = m.map((r) => r.reduce((a, b) => a + b, 0));
  const col = m[0]!.map((_, j) => m.reduce((a, r) => a + r[j]!, 0));
  const p0 = hits / n;
  const kappaOf = (pc: number) => (pc < 1 ? (p0 - pc) / (1 - pc) : Number.NaN);
  const chance = row.reduce((a, r, k) => a + (r / n) * (col[k]! / n), 0);
  const f1: number[] = [];
  for (let k = 0; k < classes; k++) {
    const tp = m[k]![k]!;
    const fp = col[k]! - tp;
    const fn = row[k]! - tp;
    if (tp + fp + fn > 0) f1.push((2 * tp) / (2 * tp + fp + fn));
  }
  return {
    rows: n,
    accuracy: p0,
    kappa: kappaOf(chance),
    kappaM: kappaOf(Math.max(...row) / n),
    kappaNoChange: kappaOf(noChange / n),
    logLoss: loss / n,
    macroF1: f1.length > 0 ? f1.reduce((a, b) => a + b, 0) / f1.length : Number.NaN,
    precision: m.map((r, k) => (col[k]! > 0 ? r[k]! / col[k]! : Number.NaN)),
    recall: m.map((r, k) => (row[k]! > 0 ? r[k]! / row[k]! : Number.NaN)),
    confusion: m,
  };
}

/** Equal within a relative tolerance, or both NaN (an undefined figure). */
export function expectClose(actual: number, expected: number, tolerance = 1e-9, what = ''): void {
  if (Number.isNaN(expected)) {
    expect(actual, what).toBeNaN();
    return;
  }
  expect(Math.abs(actual - expected), `${what}: ${actual} vs ${expected}`).toBeLessThanOrEqual(
    tolerance * Math.max(1, Math.abs(expected)),
  );
}
