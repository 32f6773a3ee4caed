/**
 * Split evaluation for the regression Hoeffding tree: the variance reduction of a binary split and
 * the best binary split of a nominal feature. Target statistics are (weight, mean, M2) triples as in
 * `core/running-stats` (West 1979).
 *
 * Variance reduction. For a parent P split into L and R (weights w, means μ), the reduction of the
 * weighted population variance is
 *   var(P) − (w_L/w_P)·var(L) − (w_R/w_P)·var(R) = w_L·w_R·(μ_R − μ_L)² / w_P²,
 * the between-group term of the decomposition of the sum of squares (Chan, Golub & LeVeque,
 * "Algorithms for computing the sample variance", American Statistician 37(3), 1983, eq. 2.1), so only
 * weights and means are needed and nothing cancels.
 */

/** Merge the triple at `src[sOff…]` into the one at `dst[dOff…]` (Chan, Golub & LeVeque 1983, eq. 2.1). */
export function mergeTriple(dst: Float64Array, dOff: number, src: Float64Array, sOff: number): void {
  const wb = src[sOff]!;
  if (wb <= 0) return;
  const wa = dst[dOff]!;
  const w = wa + wb;
  const delta = src[sOff + 1]! - dst[dOff + 1]!;
  dst[dOff] = w;
  dst[dOff + 1]! += (delta * wb) / w;
  dst[dOff + 2]! += src[sOff + 2]! + (delta * delta * wa * wb) / w;
}

/**
 * Write into `out[0…2]` the triple of P minus its part L (both given as triples at their offsets):
 * the statistics of the other side of a split.
 */
export function subtractTriple(
  parent: Float64Array,
  pOff: number,
  part: Float64Array,
  lOff: number,
  out: Float64Array,
): void {
  const wp = parent[pOff]!;
  const wl = part[lOff]!;
  const wr = wp - wl;
  if (!(wr > 0)) {
    out.fill(0);
    return;
  }
  const ml = part[lOff + 1]!;
  const mr = (wp * parent[pOff + 1]! - wl * ml) / wr;
  const delta = mr - ml;
  out[0] = wr;
  out[1] = mr;
  out[2] = Math.max(0, parent[pOff + 2]! - part[lOff + 2]! - (delta * delta * wl * wr) / wp);
}

/** Variance reduction of splitting P (weight wp, mean mp) into a part L (wl, ml) and the rest. */
export function varianceReduction(wl: number, ml: number, wp: number, mp: number): number {
  const wr = wp - wl;
  if (!(wl > 0 && wr > 0)) return 0;
  const mr = (wp * mp - wl * ml) / wr;
  const d = mr - ml;
  return (wl * wr * d * d) / (wp * wp);
}

/** A split found for one feature: where it cuts and what each side holds. Reused, never per row. */
export class SplitCandidate {
  /** Variance reduction, scaled by the share of rows in which the feature was present. */
  merit = 0;
  feature = -1;
  /** Numeric split: x ≤ threshold goes left. */
  threshold = 0;
  /** Nominal split: category c goes left iff mask[c] = 1. */
  readonly mask: Int32Array;
  /** Target triples of the rows that went left and right (rows with the feature present). */
  readonly left = new Float64Array(3);
  readonly right = new Float64Array(3);

  constructor(maxCategories: number) {
    this.mask = new Int32Array(maxCategories);
  }

  copyFrom(other: SplitCandidate): void {
    this.merit = other.merit;
    this.feature = other.feature;
    this.threshold = other.threshold;
    this.mask.set(other.mask);
    this.left.set(other.left);
    this.right.set(other.right);
  }
}

/**
 * The best binary split of a nominal feature whose `values` category triples start at
 * `stats[offset]`. For squared error the best partition of the categories into two groups is found
 * among the k − 1 cuts of the categories ordered by mean target (Fisher, "On grouping for maximum
 * homogeneity", JASA 53, 1958; Breiman, Friedman, Olshen & Stone, Classification and Regression Trees,
 * 1984, from memory), so the search is a sort and one pass. Categories never seen go to the
 * heavier side. Fills `out` (feature and merit left to the caller) and returns the unscaled
 * reduction, 0 when fewer than two categories were seen. `order` is scratch with room for `values`.
 */
export function bestNominalSplit(
  stats: Float64Array,
  offset: number,
  values: number,
  order: Int32Array,
  out: SplitCandidate,
): number {
  let seen = 0;
  const total = new Float64Array(3);
  for (let c = 0; c < values; c++) {
    if (stats[offset + 3 * c]! > 0) {
      order[seen++] = c;
      mergeTriple(total, 0, stats, offset + 3 * c);
    }
  }
  if (seen < 2) return 0;
  const sorted = order
    .subarray(0, seen)
    .sort((a, b) => stats[offset + 3 * a + 1]! - stats[offset + 3 * b + 1]!);
  const wp = total[0]!;
  const mp = total[1]!;
  let wl = 0;
  let ml = 0;
  let best = 0;
  let bestCut = -1;
  for (let i = 0; i < seen - 1; i++) {
    const s = offset + 3 * sorted[i]!;
    const w = stats[s]!;
    wl += w;
    ml += ((stats[s + 1]! - ml) * w) / wl;
    const vr = varianceReduction(wl, ml, wp, mp);
    if (vr > best) {
      best = vr;
      bestCut = i;
    }
  }
  if (bestCut < 0) return 0;
  out.mask.fill(0);
  out.left.fill(0);
  for (let i = 0; i <= bestCut; i++) {
    const c = sorted[i]!;
    out.mask[c] = 1;
    mergeTriple(out.left, 0, stats, offset + 3 * c);
  }
  const unseenLeft = out.left[0]! >= wp - out.left[0]! ? 1 : 0;
  for (let c = 0; c < values; c++) if (stats[offset + 3 * c]! <= 0) out.mask[c] = unseenLeft;
  subtractTriple(total, 0, out.left, 0, out.right);
  return best;
}
