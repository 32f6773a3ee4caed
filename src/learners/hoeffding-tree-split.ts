import { erfc, hoeffdingBound, hoeffdingCount, normalCdf } from '../core/index.js';
import {
  H_OBSERVED,
  HEAD,
  P_MEAN,
  T_M2,
  T_MAX,
  T_MIN,
  T_W,
  type TreeLeaves,
} from './hoeffding-tree-leaves.js';
import { binaryGainBound, INV_LN2, impurity, type SplitCriterion, splitMerit } from './split-merit.js';

/**
 * The split search of a Hoeffding tree (Domingos & Hulten, "Mining high-speed data streams", KDD 2000):
 * rank every attribute a leaf considers by the merit G of its best split and accept the best when
 *   G(best) − G(second best) > ε  or  ε < τR,   with ε = √(R² ln(1/δ) / 2n)   (the Hoeffding bound, eq. 1),
 * R = log₂(classes) for information gain and 1 for Gini. A numeric attribute keeps one Gaussian per
 * class and is tried at `candidateThresholds` evenly spaced thresholds between its observed minimum and
 * maximum (Pfahringer, Holmes & Kirkby, "Handling numeric attributes in Hoeffding trees", PAKDD 2008);
 * a nominal attribute splits multiway.
 *
 * The common case — information gain over two classes — has its own candidate loop: the merit of
 * `splitMerit` written out for two branches of two classes, with each branch's entropy taken as
 * Σ n ln(B/n) (four logarithms per candidate instead of six), no call and no merit handed back as a
 * boxed number. A candidate's logarithms are skipped when a bound without them (`binaryGainBound`, a
 * χ² bound on the gain) shows that its merit can matter to nobody: a candidate bound below both the
 * attribute's best merit so far and the second-best merit of the attributes ranked before it can be
 * neither the attribute's best nor change the best or second-best attribute, so the ranking, the
 * threshold and `ready` are exactly those of the full search. On the benchmark stream this skips the
 * logarithms of most candidates, and a split attempt of bagging ×10 takes about a quarter less time.
 */

export interface SplitSettings {
  readonly merit: SplitCriterion;
  readonly hoeffdingDelta: number;
  readonly tieBreak: number;
  readonly candidateThresholds: number;
  readonly branchShareFloor: number;
}

const F_MERIT = 0;
const F_CUT = 1;

/**
 * Relative and absolute slack of the χ² bound against rounding: the bound and the merit are computed
 * along different paths, each within a few ulps (about 1e-15 of the merit).
 */
const BOUND_SLACK = 1e-9;
const BOUND_FLOOR = 1e-12;

export class SplitSearch {
  /** The threshold of the split `choose` accepted. */
  threshold = 0;
  /**
   * After `choose` found no split: the weight observed at which the Hoeffding bound could first settle
   * the ranking it saw — ε below the gap between the two best merits, or below the tie threshold τR,
   * whichever comes first; 0 when it cannot say (fewer than two classes, no merit, or τ = 0, where the
   * wait for two equal merits would have no end). Hoeffding trees with n_min adaptation (García-Martín,
   * Lavesson, Grahn, Casalicchio & Boeva, 2018, from memory) wait that long before the next attempt.
   */
  ready = 0;
  private pair = new Float64Array(2);
  private scale = new Float64Array(1);
  private means = new Float64Array(1);
  /** The best merit and its threshold of the last attribute ranked. */
  private readonly found = new Float64Array(2);
  private readonly settings: SplitSettings;

  constructor(settings: SplitSettings) {
    this.settings = settings;
  }

  /** Per-class scratch for `classes` classes. */
  fit(classes: number): void {
    this.pair = new Float64Array(2 * classes);
    this.scale = new Float64Array(classes);
    this.means = new Float64Array(classes);
  }

  /**
   * The feature the active leaf `leaf` should split on now, or −1; the threshold is left in `threshold`.
   * n in the bound is the weight this leaf observed itself, not its class counts: a split seeds those
   * with the parent's, and a bound over the parent's n let each child split again after one check
   * interval of its own rows (the cascade of splits that collapsed members at λ = 6). The tie rule is in
   * units of the merit's range R, so that it means the same for any number of classes: ε < τR, that is
   * n > ln(1/δ)/(2τ²) (Domingos & Hulten 2000, eq. 1, with τ stated for R = 1).
   */
  choose(leaves: TreeLeaves, leaf: number): number {
    const c = leaves.c;
    const heads = leaves.heads;
    const head = leaf * leaves.headSize;
    let seenClasses = 0;
    for (let k = 0; k < c; k++) if (heads[head + HEAD + k]! > 0) seenClasses++;
    this.ready = 0;
    if (seenClasses < 2) return -1;
    const o = this.settings;
    const range = o.merit === 'gini' ? 1 : Math.log2(c);
    const epsilon = hoeffdingBound(range, o.hoeffdingDelta, heads[head + H_OBSERVED]!);
    const stats = leaves.stats;
    const plan = leaves.plan;
    const p = leaves.planOf(leaf);
    const numeric = leaves.numericOf(leaf);
    const base = leaves.slotOf[leaf]! * leaves.slotSize;
    const found = this.found;
    const binaryGain = c === 2 && o.merit === 'info-gain';
    let bestMerit = 0;
    let bestFeature = -1;
    let bestThreshold = 0;
    let second = 0;
    let nom = base + leaves.numericSize;
    for (let j = 0; j < leaves.perLeaf; j++) {
      const f = plan[p + j]!;
      if (j < numeric) {
        if (binaryGain) this.bestBinaryGain(leaves, base, j, second);
        else this.bestThreshold(leaves, base, j);
      } else {
        const v = leaves.cardinalities[f]!;
        const parent = impurity(o.merit, stats, nom + v * c, c);
        found[F_MERIT] = splitMerit(o.merit, stats, nom, v, c, o.branchShareFloor, parent);
        found[F_CUT] = 0;
        nom += (v + 1) * c;
      }
      const merit = found[F_MERIT]!;
      if (merit > bestMerit) {
        second = bestMerit;
        bestMerit = merit;
        bestFeature = f;
        bestThreshold = found[F_CUT]!;
      } else if (merit > second) {
        second = merit;
      }
    }
    const gap = bestMerit - second;
    if (bestFeature >= 0 && (gap > epsilon || epsilon < o.tieBreak * range)) {
      this.threshold = bestThreshold;
      return bestFeature;
    }
    if (bestFeature >= 0 && o.tieBreak > 0) {
      const tie = hoeffdingCount(range, o.hoeffdingDelta, o.tieBreak * range);
      this.ready = gap > 0 ? Math.min(tie, hoeffdingCount(range, o.hoeffdingDelta, gap)) : tie;
    }
    return -1;
  }

  /**
   * Best merit over the candidate thresholds for the Gaussian statistics of the `numeric`-th numeric
   * attribute of the slot at `base`, any criterion and class count; leaves merit and threshold in `found`.
   */
  private bestThreshold(leaves: TreeLeaves, base: number, numeric: number): void {
    const c = leaves.c;
    const stats = leaves.stats;
    const pair = this.pair;
    const scale = this.scale;
    const mean = this.means;
    const o = this.settings;
    const found = this.found;
    found[F_MERIT] = 0;
    found[F_CUT] = 0;
    let lo = Number.POSITIVE_INFINITY;
    let hi = Number.NEGATIVE_INFINITY;
    for (let k = 0; k < c; k++) {
      const t = leaves.trainAt(base, numeric, k);
      const w = stats[t + T_W]!;
      pair[c + k] = w;
      mean[k] = stats[leaves.predAt(base, numeric, k) + P_MEAN]!;
      if (w > 0) {
        if (stats[t + T_MIN]! < lo) lo = stats[t + T_MIN]!;
        if (stats[t + T_MAX]! > hi) hi = stats[t + T_MAX]!;
        // 1 / (σ√2), so that Φ((t − μ)/σ) = erfc((μ − t) · scale) / 2; 0 marks a class without spread.
        const variance = stats[t + T_M2]! / w;
        scale[k] = variance > 0 ? 1 / Math.sqrt(2 * variance) : 0;
      }
    }
    if (!(hi > lo)) return;
    const parent = impurity(o.merit, pair, c, c);
    const n = o.candidateThresholds;
    const step = (hi - lo) / (n + 1);
    for (let i = 1; i <= n; i++) {
      const cut = lo + step * i;
      for (let k = 0; k < c; k++) {
        const t = leaves.trainAt(base, numeric, k);
        const w = stats[t + T_W]!;
        let below: number;
        if (w <= 0 || cut < stats[t + T_MIN]!) below = 0;
        else if (cut >= stats[t + T_MAX]!) below = w;
        else if (scale[k] === 0) below = mean[k]! <= cut ? w : 0;
        else below = 0.5 * w * erfc((mean[k]! - cut) * scale[k]!);
        pair[k] = below;
        pair[c + k] = Math.max(w - below, 0);
      }
      const m = splitMerit(o.merit, pair, 0, 2, c, o.branchShareFloor, parent);
      if (m > found[F_MERIT]!) {
        found[F_MERIT] = m;
        found[F_CUT] = cut;
      }
    }
  }

  /**
   * `bestThreshold` for information gain over two classes, the merit written out, with the logarithms
   * of a candidate skipped when its χ² bound is below both the best merit so far and `second`, the
   * second-best merit of the attributes before this one (see the module's comment).
   */
  private bestBinaryGain(leaves: TreeLeaves, base: number, numeric: number, second: number): void {
    const stats = leaves.stats;
    const found = this.found;
    found[F_MERIT] = 0;
    found[F_CUT] = 0;
    const t0 = leaves.trainAt(base, numeric, 0);
    const t1 = leaves.trainAt(base, numeric, 1);
    const w0 = stats[t0 + T_W]!;
    const w1 = stats[t1 + T_W]!;
    const min0 = stats[t0 + T_MIN]!;
    const max0 = stats[t0 + T_MAX]!;
    const min1 = stats[t1 + T_MIN]!;
    const max1 = stats[t1 + T_MAX]!;
    const mean0 = stats[leaves.predAt(base, numeric, 0) + P_MEAN]!;
    const mean1 = stats[leaves.predAt(base, numeric, 1) + P_MEAN]!;
    let lo = Number.POSITIVE_INFINITY;
    let hi = Number.NEGATIVE_INFINITY;
    let scale0 = 0;
    let scale1 = 0;
    if (w0 > 0) {
      lo = min0;
      hi = max0;
      const variance = stats[t0 + T_M2]! / w0;
      scale0 = variance > 0 ? 1 / Math.sqrt(2 * variance) : 0;
    }
    if (w1 > 0) {
      if (min1 < lo) lo = min1;
      if (max1 > hi) hi = max1;
      const variance = stats[t1 + T_M2]! / w1;
      scale1 = variance > 0 ? 1 / Math.sqrt(2 * variance) : 0;
    }
    if (!(hi > lo)) return;
    const pair = this.pair;
    pair[2] = w0;
    pair[3] = w1;
    const parent = impurity('info-gain', pair, 2, 2);
    const o = this.settings;
    const n = o.candidateThresholds;
    const step = (hi - lo) / (n + 1);
    const minShare = o.branchShareFloor;
    let best = 0;
    let bestCut = 0;
    for (let i = 1; i <= n; i++) {
      const cut = lo + step * i;
      let b0: number;
      if (w0 <= 0 || cut < min0) b0 = 0;
      else if (cut >= max0) b0 = w0;
      else if (scale0 === 0) b0 = mean0 <= cut ? w0 : 0;
      else b0 = 0.5 * w0 * erfc((mean0 - cut) * scale0);
      let b1: number;
      if (w1 <= 0 || cut < min1) b1 = 0;
      else if (cut >= max1) b1 = w1;
      else if (scale1 === 0) b1 = mean1 <= cut ? w1 : 0;
      else b1 = 0.5 * w1 * erfc((mean1 - cut) * scale1);
      const a0 = Math.max(w0 - b0, 0);
      const a1 = Math.max(w1 - b1, 0);
      const below = b0 + b1;
      const above = a0 + a1;
      const total = below + above;
      // A split that sends less than the floor's share to either side separates nothing that matters.
      const floor = minShare * total;
      if (!(total > 0 && below > 0 && below >= floor && above > 0 && above >= floor)) continue;
      const bound = binaryGainBound(b0, b1, a0, a1);
      if (bound * (1 + BOUND_SLACK) + BOUND_FLOOR < Math.max(best, second)) continue;
      // Each branch's B·H = Σ n ln(B/n): two logarithms and one division per branch.
      let weighted = 0;
      let inv = 1 / below;
      if (b0 > 0) weighted -= b0 * Math.log(b0 * inv);
      if (b1 > 0) weighted -= b1 * Math.log(b1 * inv);
      inv = 1 / above;
      if (a0 > 0) weighted -= a0 * Math.log(a0 * inv);
      if (a1 > 0) weighted -= a1 * Math.log(a1 * inv);
      const m = parent - weighted * (INV_LN2 / total);
      if (m > best) {
        best = m;
        bestCut = cut;
      }
    }
    found[F_MERIT] = best;
    found[F_CUT] = bestCut;
  }
}

/** Estimated weight of class `k` at or below `cut`, from its Gaussian and its observed range. */
export function weightBelow(
  leaves: TreeLeaves,
  base: number,
  numeric: number,
  k: number,
  cut: number,
): number {
  const stats = leaves.stats;
  const t = leaves.trainAt(base, numeric, k);
  const w = stats[t + T_W]!;
  if (w <= 0 || cut < stats[t + T_MIN]!) return 0;
  if (cut >= stats[t + T_MAX]!) return w;
  const mean = stats[leaves.predAt(base, numeric, k) + P_MEAN]!;
  const variance = stats[t + T_M2]! / w;
  if (!(variance > 0)) return mean <= cut ? w : 0;
  return w * normalCdf(cut, mean, Math.sqrt(variance));
}
