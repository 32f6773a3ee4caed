import { Rng } from '../../src/core/index.js';

/**
 * A yardstick for the learning core: the least arithmetic a 10-member bagging of naive-Bayes-leaf trees
 * must do per row, written as one flat typed-array loop, timed on the same rows. Ten fixed complete
 * trees of depth 8 (256 leaves each, about the leaf count the default memory cap keeps after 1 M rows);
 * per member and row: a Poisson(1) draw by table inversion, a branch-free walk to a leaf, two-class
 * naive Bayes over every feature, and a Welford update of the label's statistics when the draw is > 0.
 * No split search, no memory cap, no missing values, no checks, no lifecycle — so the engine's rate
 * divided by this one says what its bookkeeping costs, and this one says what the machine allows.
 * The trees are about the size the engine's reach over the full 1,000,000 rows; the quick run's trees
 * are much smaller, so there the yardstick is no bound.
 */
const MEMBERS = 10;
const DEPTH = 8;
const LEAVES = 1 << DEPTH;
/** P(k ≤ 0..3) for Poisson(1); larger draws count as 3 (their probability is 1.9%). */
const POISSON_CDF = [Math.exp(-1), 2 * Math.exp(-1), 2.5 * Math.exp(-1)];

interface FixedTree {
  readonly feature: Int32Array;
  readonly threshold: Float64Array;
  /** Per leaf and feature: mean and 1/variance of class 0, then of class 1. */
  readonly predict: Float64Array;
  /** Per leaf, class and feature: weight and M2. */
  readonly train: Float64Array;
  readonly counts: Float64Array;
}

function fixedTree(rng: Rng, width: number): FixedTree {
  const internal = LEAVES - 1;
  const feature = Int32Array.from({ length: internal }, () => Math.floor(rng.next() * width));
  const threshold = Float64Array.from({ length: internal }, () => 10 * rng.next());
  const predict = new Float64Array(LEAVES * width * 4);
  for (let i = 0; i < predict.length; i += 2) {
    predict[i] = 5;
    predict[i + 1] = 0.12;
  }
  return {
    feature,
    threshold,
    predict,
    train: new Float64Array(LEAVES * 2 * width * 2),
    counts: new Float64Array(LEAVES * 2).fill(1),
  };
}

/**
 * One run of the yardstick over `rows` rows, to be timed; returns its correct predictions. With `train`
 * false, only the draw-free walk and naive Bayes (scoring).
 */
export function yardstickRun(
  values: Float64Array,
  labels: Int32Array,
  rows: number,
  width: number,
  train: boolean,
): () => number {
  return () => {
    const rng = new Rng('bench-yardstick');
    const trees = Array.from({ length: MEMBERS }, () => fixedTree(rng, width));
    let correct = 0;
    for (let r = 0; r < rows; r++) {
      const at = r * width;
      const label = labels[r]!;
      let vote = 0;
      for (let m = 0; m < MEMBERS; m++) {
        const t = trees[m]!;
        const u = train ? rng.next() : 0;
        const k = u < POISSON_CDF[0]! ? 0 : u < POISSON_CDF[1]! ? 1 : u < POISSON_CDF[2]! ? 2 : 3;
        let n = 0;
        while (n < LEAVES - 1) n = 2 * n + 1 + Number(values[at + t.feature[n]!]! > t.threshold[n]!);
        const leaf = n - (LEAVES - 1);
        const p = t.predict;
        const n0 = t.counts[2 * leaf]!;
        const n1 = t.counts[2 * leaf + 1]!;
        let s0 = 0;
        let s1 = 0;
        let p0 = n0 * n0;
        let p1 = n1 * n1;
        for (let j = 0, q = leaf * width * 4; j < width; j++, q += 4) {
          const x = values[at + j]!;
          const d0 = x - p[q]!;
          const d1 = x - p[q + 2]!;
          s0 += d0 * d0 * p[q + 1]!;
          s1 += d1 * d1 * p[q + 3]!;
          p0 *= p[q + 1]!;
          p1 *= p[q + 3]!;
        }
        vote += 1 / (1 + Math.sqrt(p0 / p1) * Math.exp(-0.5 * (s0 - s1)));
        if (k === 0) continue;
        t.counts[2 * leaf + label]! += k;
        const w = t.train;
        for (
          let j = 0, q = (leaf * 2 + label) * width * 2, s = leaf * width * 4 + label * 2;
          j < width;
          j++, q += 2, s += 4
        ) {
          const x = values[at + j]!;
          const total = w[q]! + k;
          const mean = p[s]!;
          const delta = x - mean;
          const next = mean + (k / total) * delta;
          const m2 = w[q + 1]! + k * delta * (x - next);
          w[q] = total;
          w[q + 1] = m2;
          p[s] = next;
          p[s + 1] = m2 > 1e-9 * total ? total / m2 : 1e9;
        }
      }
      if ((vote > MEMBERS / 2 ? 1 : 0) === label) correct++;
    }
    return correct;
  };
}
