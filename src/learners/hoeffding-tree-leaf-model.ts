import type { TreeLeaves } from './hoeffding-tree-leaves.js';
import * as layout from './hoeffding-tree-leaves.js';

/**
 * What a Hoeffding tree's leaf knows and says: the majority class of its counts, naive Bayes over its
 * attribute statistics (Holmes, Kirkby & Pfahringer, "Stress-testing Hoeffding trees", PKDD 2005), and
 * the update of those statistics with a labelled row (West's weighted Welford, CACM 1979). Each loop
 * walks the leaf's plan: its numeric features, then its nominal ones (see `TreeLeaves`).
 */

/**
 * The slot layout (`hoeffding-tree-leaves.ts`) as this module's own constants: V8 folds a module's own
 * `const`s into the code it compiles but reads an imported binding from its cell at every use, which in
 * these loops cost bagging ×10 about 11% (alternated builds in one process).
 */
const { HEAD, P_INV_VAR, P_MEAN, PRED, T_M2, T_MAX, T_MIN, T_W, TRAIN } = layout;

/** Variance floor for naive-Bayes densities of a class seen with a single value. */
const MIN_VARIANCE = 1e-9;

/** Per-class scratch of naive Bayes, reused every row. */
export class NaiveBayesScratch {
  logp = new Float64Array(1);
  sq = new Float64Array(1);
  prod = new Float64Array(1);

  fit(classes: number): void {
    this.logp = new Float64Array(classes);
    this.sq = new Float64Array(classes);
    this.prod = new Float64Array(classes);
  }
}

/** The majority class of the leaf whose head starts at `head` (the first on ties). */
export function majorityClass(leaves: TreeLeaves, head: number): number {
  const heads = leaves.heads;
  let best = 0;
  let bestCount = heads[head + HEAD]!;
  for (let k = 1; k < leaves.c; k++) {
    const v = heads[head + HEAD + k]!;
    if (v > bestCount) {
      bestCount = v;
      best = k;
    }
  }
  return best;
}

/** Write the normalised class counts; returns the majority class. */
export function majorityInto(leaves: TreeLeaves, head: number, out: Float64Array, outOffset: number): number {
  const heads = leaves.heads;
  const c = leaves.c;
  if (c === 2) {
    // Two classes, the common case: the same sums, in one pass.
    const n0 = heads[head + HEAD]!;
    const n1 = heads[head + HEAD + 1]!;
    const total = n0 + n1;
    if (total > 0) {
      const inv = 1 / total;
      out[outOffset] = n0 * inv;
      out[outOffset + 1] = n1 * inv;
    } else {
      out[outOffset] = 0.5;
      out[outOffset + 1] = 0.5;
    }
    return n1 > n0 ? 1 : 0;
  }
  let total = 0;
  for (let k = 0; k < c; k++) total += heads[head + HEAD + k]!;
  if (total > 0) {
    const inv = 1 / total;
    for (let k = 0; k < c; k++) out[outOffset + k] = heads[head + HEAD + k]! * inv;
  } else {
    const u = 1 / c;
    for (let k = 0; k < c; k++) out[outOffset + k] = u;
  }
  return majorityClass(leaves, head);
}

/**
 * Naive Bayes over the statistics of the active leaf `leaf` (head at `head`, slot `slot`), in log space
 * with one logarithm per class:
 * log p(k | x) = ½ log(n_k² · Π 1/σ² · Π P(v | k)²) − ½ Σ (x − μ)²/σ² + constant.
 */
export function naiveBayesInto(
  leaves: TreeLeaves,
  scratch: NaiveBayesScratch,
  leaf: number,
  head: number,
  slot: number,
  row: Float64Array,
  offset: number,
  out: Float64Array,
  outOffset: number,
): number {
  if (leaves.c === 2) {
    return leaves.allNumeric
      ? naiveBayesNumericBinary(leaves, leaf, head, slot, row, offset, out, outOffset)
      : naiveBayesBinary(leaves, leaf, head, slot, row, offset, out, outOffset);
  }
  const c = leaves.c;
  const heads = leaves.heads;
  const stats = leaves.stats;
  const cardinality = leaves.cardinalities;
  const plan = leaves.plan;
  const { sq, prod, logp } = scratch;
  for (let k = 0; k < c; k++) {
    const n = heads[head + HEAD + k]!;
    sq[k] = 0;
    prod[k] = n * n;
  }
  const p = leaves.planOf(leaf);
  const numeric = leaves.numericOf(leaf);
  let pred = slot * leaves.slotSize;
  for (let j = 0; j < numeric; j++, pred += PRED * c) {
    const x = row[offset + plan[p + j]!]!;
    if (Number.isNaN(x)) continue;
    for (let k = 0, g = pred; k < c; k++, g += PRED) {
      const iv = stats[g + P_INV_VAR]!;
      if (iv > 0) {
        const d = x - stats[g + P_MEAN]!;
        sq[k]! += d * d * iv;
        prod[k]! *= iv;
      }
    }
  }
  let nom = slot * leaves.slotSize + leaves.numericSize;
  for (let j = numeric; j < leaves.perLeaf; j++) {
    const f = plan[p + j]!;
    const x = row[offset + f]!;
    const v = cardinality[f]!;
    if (x >= 0 && x < v && (x | 0) === x) {
      const cell = nom + x * c;
      const totals = nom + v * c;
      for (let k = 0; k < c; k++) {
        const q = (stats[cell + k]! + 1) / (stats[totals + k]! + v);
        prod[k]! *= q * q;
      }
    }
    nom += (v + 1) * c;
  }
  let best = 0;
  let max = Number.NEGATIVE_INFINITY;
  for (let k = 0; k < c; k++) {
    const q = prod[k]!;
    const lp =
      q > 0 && q < Number.POSITIVE_INFINITY
        ? 0.5 * (Math.log(q) - sq[k]!)
        : slowLog(leaves, leaf, head, slot, row, offset, k);
    logp[k] = lp;
    if (lp > max) {
      max = lp;
      best = k;
    }
  }
  if (max === Number.NEGATIVE_INFINITY) {
    const u = 1 / c;
    for (let k = 0; k < c; k++) out[outOffset + k] = u;
    return best;
  }
  let sum = 0;
  for (let k = 0; k < c; k++) {
    const e = Math.exp(logp[k]! - max);
    out[outOffset + k] = e;
    sum += e;
  }
  const inv = 1 / sum;
  for (let k = 0; k < c; k++) out[outOffset + k]! *= inv;
  return best;
}

/**
 * Naive Bayes for two classes, the common case, with one square root and one exponential instead of
 * two logarithms and two exponentials: with π_k = n_k² · Π 1/σ² · Π P(v | k)² and s_k = Σ (x − μ)²/σ²,
 * P(1 | x) = 1 / (1 + √(π₀/π₁) · e^(−(s₀ − s₁)/2)). Falls back to the log form when a product under- or
 * overflows.
 */
function naiveBayesBinary(
  leaves: TreeLeaves,
  leaf: number,
  head: number,
  slot: number,
  row: Float64Array,
  offset: number,
  out: Float64Array,
  outOffset: number,
): number {
  const stats = leaves.stats;
  const plan = leaves.plan;
  const n0 = leaves.heads[head + HEAD]!;
  const n1 = leaves.heads[head + HEAD + 1]!;
  let s0 = 0;
  let s1 = 0;
  let p0 = n0 * n0;
  let p1 = n1 * n1;
  const p = leaves.planOf(leaf);
  const numeric = leaves.numericOf(leaf);
  let pred = slot * leaves.slotSize;
  for (let j = 0; j < numeric; j++, pred += 2 * PRED) {
    const x = row[offset + plan[p + j]!]!;
    if (Number.isNaN(x)) continue;
    const iv0 = stats[pred + P_INV_VAR]!;
    if (iv0 > 0) {
      const d = x - stats[pred + P_MEAN]!;
      s0 += d * d * iv0;
      p0 *= iv0;
    }
    const iv1 = stats[pred + PRED + P_INV_VAR]!;
    if (iv1 > 0) {
      const d = x - stats[pred + PRED + P_MEAN]!;
      s1 += d * d * iv1;
      p1 *= iv1;
    }
  }
  const cardinality = leaves.cardinalities;
  let nom = slot * leaves.slotSize + leaves.numericSize;
  for (let j = numeric; j < leaves.perLeaf; j++) {
    const f = plan[p + j]!;
    const x = row[offset + f]!;
    const v = cardinality[f]!;
    if (x >= 0 && x < v && (x | 0) === x) {
      const cell = nom + x * 2;
      const totals = nom + v * 2;
      const q0 = (stats[cell]! + 1) / (stats[totals]! + v);
      const q1 = (stats[cell + 1]! + 1) / (stats[totals + 1]! + v);
      p0 *= q0 * q0;
      p1 *= q1 * q1;
    }
    nom += (v + 1) * 2;
  }
  return binaryPosterior(leaves, leaf, head, slot, row, offset, n0, n1, p0, p1, s0, s1, out, outOffset);
}

/**
 * `naiveBayesBinary` for a leaf whose plan is every feature, all numeric, in order (`allNumeric`):
 * attribute j of the slot is feature j of the row, so the loop reads no plan and has no nominal part.
 * A specialisation chosen when the tree is built, kept apart on purpose: one loop for both, reading
 * the row or the values gathered through the plan, cost bagging ×10 about 4% (alternated builds).
 */
function naiveBayesNumericBinary(
  leaves: TreeLeaves,
  leaf: number,
  head: number,
  slot: number,
  row: Float64Array,
  offset: number,
  out: Float64Array,
  outOffset: number,
): number {
  const stats = leaves.stats;
  const n0 = leaves.heads[head + HEAD]!;
  const n1 = leaves.heads[head + HEAD + 1]!;
  let s0 = 0;
  let s1 = 0;
  let p0 = n0 * n0;
  let p1 = n1 * n1;
  const end = offset + leaves.numericCap;
  for (let i = offset, pred = slot * leaves.slotSize; i < end; i++, pred += 2 * PRED) {
    const x = row[i]!;
    if (Number.isNaN(x)) continue;
    const iv0 = stats[pred + P_INV_VAR]!;
    if (iv0 > 0) {
      const d = x - stats[pred + P_MEAN]!;
      s0 += d * d * iv0;
      p0 *= iv0;
    }
    const iv1 = stats[pred + PRED + P_INV_VAR]!;
    if (iv1 > 0) {
      const d = x - stats[pred + PRED + P_MEAN]!;
      s1 += d * d * iv1;
      p1 *= iv1;
    }
  }
  return binaryPosterior(leaves, leaf, head, slot, row, offset, n0, n1, p0, p1, s0, s1, out, outOffset);
}

/**
 * The two-class posterior from the products and sums of `naiveBayesBinary`: P(1 | x) written to `out`
 * beside P(0 | x); returns the class predicted.
 */
function binaryPosterior(
  leaves: TreeLeaves,
  leaf: number,
  head: number,
  slot: number,
  row: Float64Array,
  offset: number,
  n0: number,
  n1: number,
  p0: number,
  p1: number,
  s0: number,
  s1: number,
  out: Float64Array,
  outOffset: number,
): number {
  let one: number;
  if (n0 === 0 || n1 === 0) {
    one = n0 === n1 ? 0.5 : n0 === 0 ? 1 : 0;
  } else if (p0 > 0 && p1 > 0 && p0 < Number.POSITIVE_INFINITY && p1 < Number.POSITIVE_INFINITY) {
    one = 1 / (1 + Math.sqrt(p0 / p1) * Math.exp(-0.5 * (s0 - s1)));
  } else {
    const l0 = slowLog(leaves, leaf, head, slot, row, offset, 0);
    const l1 = slowLog(leaves, leaf, head, slot, row, offset, 1);
    one = 1 / (1 + Math.exp(l0 - l1));
  }
  out[outOffset] = 1 - one;
  out[outOffset + 1] = one;
  return one > 0.5 ? 1 : 0;
}

/** The log-score of class `k` summed term by term, for when the product under- or overflows. */
function slowLog(
  leaves: TreeLeaves,
  leaf: number,
  head: number,
  slot: number,
  row: Float64Array,
  offset: number,
  k: number,
): number {
  const c = leaves.c;
  const stats = leaves.stats;
  const plan = leaves.plan;
  const count = leaves.heads[head + HEAD + k]!;
  if (!(count > 0)) return Number.NEGATIVE_INFINITY;
  let lp = Math.log(count);
  const p = leaves.planOf(leaf);
  const numeric = leaves.numericOf(leaf);
  let pred = slot * leaves.slotSize + k * PRED;
  for (let j = 0; j < numeric; j++, pred += PRED * c) {
    const x = row[offset + plan[p + j]!]!;
    const iv = stats[pred + P_INV_VAR]!;
    if (!Number.isNaN(x) && iv > 0) {
      const d = x - stats[pred + P_MEAN]!;
      lp += 0.5 * Math.log(iv) - 0.5 * d * d * iv;
    }
  }
  const cardinality = leaves.cardinalities;
  let nom = slot * leaves.slotSize + leaves.numericSize;
  for (let j = numeric; j < leaves.perLeaf; j++) {
    const f = plan[p + j]!;
    const x = row[offset + f]!;
    const v = cardinality[f]!;
    if (x >= 0 && x < v && (x | 0) === x)
      lp += Math.log((stats[nom + x * c + k]! + 1) / (stats[nom + v * c + k]! + v));
    nom += (v + 1) * c;
  }
  return lp;
}

/** Add a labelled row to the statistics of the active leaf `leaf` in slot `slot`; missing values are skipped. */
export function observe(
  leaves: TreeLeaves,
  leaf: number,
  slot: number,
  row: Float64Array,
  offset: number,
  label: number,
  weight: number,
): void {
  if (leaves.allNumeric) {
    observeNumeric(leaves, slot, row, offset, label, weight);
    return;
  }
  const c = leaves.c;
  const stats = leaves.stats;
  const plan = leaves.plan;
  const base = slot * leaves.slotSize;
  const p = leaves.planOf(leaf);
  const numeric = leaves.numericOf(leaf);
  let pred = base + label * PRED;
  let train = base + leaves.predSize + label * leaves.numericCap * TRAIN;
  for (let j = 0; j < numeric; j++, pred += PRED * c, train += TRAIN) {
    const x = row[offset + plan[p + j]!]!;
    if (!Number.isNaN(x)) welford(stats, pred, train, x, weight);
  }
  const cardinality = leaves.cardinalities;
  let nom = base + leaves.numericSize;
  for (let j = numeric; j < leaves.perLeaf; j++) {
    const f = plan[p + j]!;
    const x = row[offset + f]!;
    const v = cardinality[f]!;
    if (x >= 0 && x < v && (x | 0) === x) {
      stats[nom + x * c + label]! += weight;
      stats[nom + v * c + label]! += weight;
    }
    nom += (v + 1) * c;
  }
}

/**
 * `observe` for a leaf whose plan is every feature, all numeric, in order (`allNumeric`): West's weighted
 * Welford update (CACM 1979) of the label's mean, M2 and 1/variance, and its range, feature by feature.
 */
function observeNumeric(
  leaves: TreeLeaves,
  slot: number,
  row: Float64Array,
  offset: number,
  label: number,
  weight: number,
): void {
  const c = leaves.c;
  const stats = leaves.stats;
  const base = slot * leaves.slotSize;
  const end = offset + leaves.numericCap;
  for (
    let i = offset,
      pred = base + label * PRED,
      train = base + leaves.predSize + label * leaves.numericCap * TRAIN;
    i < end;
    i++, pred += PRED * c, train += TRAIN
  ) {
    const x = row[i]!;
    if (Number.isNaN(x)) continue;
    welford(stats, pred, train, x, weight);
  }
}

/** One weighted Welford step of the statistics at `pred` (mean, 1/variance) and `train` (weight, M2, range). */
function welford(stats: Float32Array, pred: number, train: number, x: number, weight: number): void {
  const before = stats[train + T_W]!;
  const total = before + weight;
  const mean = stats[pred + P_MEAN]!;
  const delta = x - mean;
  const next = mean + (weight / total) * delta;
  const m2 = stats[train + T_M2]! + weight * delta * (x - next);
  stats[train + T_W] = total;
  stats[train + T_M2] = m2;
  stats[pred + P_MEAN] = next;
  stats[pred + P_INV_VAR] = m2 > MIN_VARIANCE * total ? total / m2 : 1 / MIN_VARIANCE;
  if (before === 0) {
    stats[train + T_MIN] = x;
    stats[train + T_MAX] = x;
  } else if (x < stats[train + T_MIN]!) {
    stats[train + T_MIN] = x;
  } else if (x > stats[train + T_MAX]!) {
    stats[train + T_MAX] = x;
  }
}
