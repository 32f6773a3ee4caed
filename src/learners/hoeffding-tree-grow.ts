import {
  H_MC_CORRECT,
  H_NB_CORRECT,
  H_OBSERVED,
  P_INV_VAR,
  P_MEAN,
  T_M2,
  T_MAX,
  T_MIN,
  T_W,
  type TreeLeaves,
} from './hoeffding-tree-leaves.js';
import type { TreeNodes } from './hoeffding-tree-nodes.js';
import { weightBelow } from './hoeffding-tree-split.js';

/**
 * How a Hoeffding tree grows: a leaf becomes an internal node with new leaves below it. Each child
 * starts with the class counts the split attribute sends its way and inherits the parent's per-class
 * attribute statistics, so that its first predictions are the parent's naive Bayes with the child's
 * priors instead of a majority vote or a naive Bayes over a handful of rows.
 */

/** The prior a split's children inherit, in check intervals of the parent's weight (see `inherit`). */
const PRIOR_SHARE = 0.25;

/** What a split hands its children: a copy of the parent's slot and what is needed to read it. */
interface ParentStats {
  readonly stats: Float32Array;
  /** Where each feature sits in the parent's slot (see `TreeLeaves.layoutOf`). */
  readonly where: Int32Array;
  /** Each class's weight in the split attribute's statistics. */
  readonly classWeight: Float64Array;
  /** Weight the parent's statistics observed. */
  readonly observed: number;
  readonly majorityRight: number;
  readonly naiveBayesRight: number;
  readonly splitFeature: number;
  readonly threshold: number;
}

/**
 * Split the leaf `leaf` at node `node` on feature `f` (at `threshold` when numeric). Missing values will
 * follow the branch that gets the most weight (the first on ties). `share` is per-class scratch.
 */
export function splitLeaf(
  nodes: TreeNodes,
  leaves: TreeLeaves,
  node: number,
  leaf: number,
  f: number,
  threshold: number,
  checkInterval: number,
  share: Float64Array,
): void {
  const c = leaves.c;
  const stats = leaves.stats;
  const heads = leaves.heads;
  const cardinality = leaves.cardinalities[f]!;
  const branches = cardinality > 0 ? cardinality : 2;
  const childDepth = nodes.depth[node]! + 1;
  const base = leaves.slotOf[leaf]! * leaves.slotSize;
  const where = leaves.layoutOf(leaf);
  const at = where[f]!;
  // The weight of each class in the split attribute, and the share of it each branch gets.
  const seeds = new Float64Array(branches * c);
  const classWeight = new Float64Array(c);
  for (let k = 0; k < c; k++) {
    if (cardinality > 0) {
      const nom = base + leaves.numericSize + at;
      for (let b = 0; b < branches; b++) seeds[b * c + k] = stats[nom + b * c + k]!;
      classWeight[k] = stats[nom + branches * c + k]!;
    } else {
      const w = stats[leaves.trainAt(base, at, k) + T_W]!;
      const below = weightBelow(leaves, base, at, k, threshold);
      seeds[k] = below;
      seeds[c + k] = Math.max(0, w - below);
      classWeight[k] = w;
    }
  }
  let heaviest = 0;
  let heaviestWeight = -1;
  for (let b = 0; b < branches; b++) {
    let w = 0;
    for (let k = 0; k < c; k++) w += seeds[b * c + k]!;
    if (w > heaviestWeight) {
      heaviestWeight = w;
      heaviest = b;
    }
  }
  const head = leaf * leaves.headSize;
  const from: ParentStats = {
    stats: stats.slice(base, base + leaves.slotSize),
    where,
    classWeight,
    observed: heads[head + H_OBSERVED]!,
    majorityRight: heads[head + H_MC_CORRECT]!,
    naiveBayesRight: heads[head + H_NB_CORRECT]!,
    splitFeature: f,
    threshold,
  };
  // The split node gives up its leaf: the first child takes over the leaf's index, with a fresh slot.
  leaves.release(leaf);
  let first = -1;
  for (let b = 0; b < branches; b++) {
    const child = leaves.add(seeds.subarray(b * c, (b + 1) * c), b === 0 ? leaf : -1);
    const n = nodes.addLeaf(childDepth, child);
    if (b === 0) first = n;
    inherit(leaves, child, from, seeds, b, checkInterval, share);
  }
  nodes.setSplit(node, f, threshold, first, heaviest);
}

/**
 * Give the child of branch `b` the parent's per-class statistics of every attribute both consider,
 * each class's weight scaled by the share of it the branch received. Under naive Bayes's own
 * assumption (attributes independent given the class) the class-conditional distribution of the other
 * attributes is the same on both sides of a split, so this is the parent's model restricted to the
 * branch; the split attribute keeps its mean and spread, with its range cut at the threshold.
 * The inherited statistics act as a prior worth at most a quarter of `checkInterval` of the parent's
 * weight, so that the child's own rows outweigh them long before its first split can pass the
 * Hoeffding bound (whose n counts only what the child observed): a stronger prior held SEA's thin
 * leaves to the parent's Gaussians (θ = 8: 0.868 at a full interval, 0.877 at a quarter, 0.882 at a
 * twentieth), a weaker one let a 26-class tree fall back towards its fresh leaves' guesses. The
 * adaptive leaf's scores are inherited in the same proportion, so a parent that predicted by naive
 * Bayes has children that do too.
 */
function inherit(
  leaves: TreeLeaves,
  leaf: number,
  from: ParentStats,
  seeds: Float64Array,
  b: number,
  checkInterval: number,
  share: Float64Array,
): void {
  const c = leaves.c;
  const stats = leaves.stats;
  const parent = from.stats;
  let branchWeight = 0;
  let parentWeight = 0;
  for (let k = 0; k < c; k++) {
    branchWeight += seeds[b * c + k]!;
    parentWeight += from.classWeight[k]!;
  }
  if (!(branchWeight > 0 && parentWeight > 0 && from.observed > 0)) return;
  const prior = (PRIOR_SHARE * checkInterval * parentWeight) / from.observed;
  const scale = branchWeight > prior ? prior / branchWeight : 1;
  for (let k = 0; k < c; k++) {
    const w = from.classWeight[k]!;
    share[k] = w > 0 ? (seeds[b * c + k]! / w) * scale : 0;
  }
  const base = leaves.slotOf[leaf]! * leaves.slotSize;
  const plan = leaves.plan;
  const p = leaves.planOf(leaf);
  const numeric = leaves.numericOf(leaf);
  for (let j = 0; j < numeric; j++) {
    const g = plan[p + j]!;
    const at = from.where[g]!;
    if (at < 0) continue;
    for (let k = 0; k < c; k++) {
      const w = parent[leaves.trainAt(0, at, k) + T_W]! * share[k]!;
      if (!(w > 0)) continue;
      const q = leaves.predAt(base, j, k);
      const t = leaves.trainAt(base, j, k);
      const pq = leaves.predAt(0, at, k);
      const pt = leaves.trainAt(0, at, k);
      stats[q + P_MEAN] = parent[pq + P_MEAN]!;
      stats[q + P_INV_VAR] = parent[pq + P_INV_VAR]!;
      stats[t + T_W] = w;
      stats[t + T_M2] = parent[pt + T_M2]! * share[k]!;
      let lo = parent[pt + T_MIN]!;
      let hi = parent[pt + T_MAX]!;
      if (g === from.splitFeature) {
        if (b === 0) hi = Math.min(hi, from.threshold);
        else lo = Math.max(lo, from.threshold);
      }
      stats[t + T_MIN] = lo;
      stats[t + T_MAX] = hi;
    }
  }
  let nom = base + leaves.numericSize;
  for (let j = numeric; j < leaves.perLeaf; j++) {
    const g = plan[p + j]!;
    const at = from.where[g]!;
    const v = leaves.cardinalities[g]!;
    if (at >= 0) {
      const src = leaves.numericSize + at;
      for (let r = 0; r <= v; r++)
        for (let k = 0; k < c; k++) stats[nom + r * c + k] = parent[src + r * c + k]! * share[k]!;
    }
    nom += (v + 1) * c;
  }
  const head = leaf * leaves.headSize;
  const inherited = (branchWeight * scale) / parentWeight;
  leaves.heads[head + H_MC_CORRECT] = from.majorityRight * inherited;
  leaves.heads[head + H_NB_CORRECT] = from.naiveBayesRight * inherited;
}
