/**
 * The merit of a candidate split, for tree learners: the drop in impurity from the parent's class
 * distribution to the weighted impurities of its branches — Quinlan's information gain in bits, or the
 * Gini reduction of CART (Breiman et al., Classification and Regression Trees, 1984, §4.3).
 *
 * Written for the hot path of split attempts: entropy as (W ln W − Σ n ln n)/(W ln 2), so a branch
 * costs one logarithm per non-empty class plus one, and no division per class.
 */
export type SplitCriterion = 'info-gain' | 'gini';

export const INV_LN2 = 1 / Math.LN2;

/** Impurity of `classes` non-negative weights at `offset` (0 when they sum to 0). */
export function impurity(
  criterion: SplitCriterion,
  counts: Float64Array | Float32Array,
  offset: number,
  classes: number,
): number {
  let total = 0;
  let acc = 0;
  if (criterion === 'gini') {
    for (let k = 0; k < classes; k++) {
      const n = counts[offset + k]!;
      total += n;
      acc += n * n;
    }
    return total > 0 ? 1 - acc / (total * total) : 0;
  }
  for (let k = 0; k < classes; k++) {
    const n = counts[offset + k]!;
    if (n > 0) {
      total += n;
      acc += n * Math.log(n);
    }
  }
  return total > 0 ? (total * Math.log(total) - acc) * (INV_LN2 / total) : 0;
}

/**
 * Merit of a split whose branch class weights are `branches` rows of `classes` values at `offset` of
 * `table` (branch-major), given the impurity of the parent (their sum). A split that sends at least
 * `minShare` of the weight to fewer than two branches is worth 0: it separates nothing that matters.
 */
export function splitMerit(
  criterion: SplitCriterion,
  table: Float64Array | Float32Array,
  offset: number,
  branches: number,
  classes: number,
  minShare: number,
  parentImpurity: number,
): number {
  let total = 0;
  let weighted = 0;
  const gini = criterion === 'gini';
  for (let b = 0, at = offset; b < branches; b++, at += classes) {
    let w = 0;
    let acc = 0;
    for (let k = 0; k < classes; k++) {
      const n = table[at + k]!;
      if (n > 0) {
        w += n;
        acc += gini ? n * n : n * Math.log(n);
      }
    }
    if (w > 0) weighted += gini ? w - acc / w : w * Math.log(w) - acc;
    total += w;
  }
  if (!(total > 0)) return 0;
  // Count the branches that carry at least minShare of the weight.
  let heavy = 0;
  const floor = minShare * total;
  for (let b = 0, at = offset; b < branches && heavy < 2; b++, at += classes) {
    let w = 0;
    for (let k = 0; k < classes; k++) w += table[at + k]!;
    if (w > 0 && w >= floor) heavy++;
  }
  if (heavy < 2) return 0;
  return parentImpurity - (gini ? weighted / total : weighted * (INV_LN2 / total));
}

/**
 * An upper bound, in bits, on the information gain of a two-branch split of two classes — b₀, b₁ the
 * class weights below the cut, a₀, a₁ above — that needs no logarithm: the gain is the mutual
 * information of class and branch, a Kullback-Leibler divergence, and KL(P‖Q) ≤ ln(1 + χ²(P‖Q)) ≤
 * χ²(P‖Q) (Gibbs & Su, "On choosing and bounding probability metrics", International Statistical Review
 * 70, 2002; from memory), which for this 2×2 table is (b₀a₁ − b₁a₀)² / (B·A·W₀·W₁) nats. NaN when a
 * row or column of the table is empty.
 */
export function binaryGainBound(b0: number, b1: number, a0: number, a1: number): number {
  const cross = b0 * a1 - b1 * a0;
  return ((cross * cross) / ((b0 + b1) * (a0 + a1) * (b0 + a0) * (b1 + a1))) * INV_LN2;
}
