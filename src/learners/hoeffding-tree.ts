import {
  checkSchema,
  checkSnapshot,
  decodeF64,
  decodeI32,
  encodeF64,
  encodeI32,
  erfc,
  type FeatureSchema,
  hoeffdingBound,
  integerAtLeast,
  nonNegative,
  normalCdf,
  oneOf,
  openUnit,
  positive,
  Rng,
  type RngState,
  type Seed,
  ShoalError,
} from '../core/index.js';
import {
  type Classifier,
  checkLabel,
  checkOut,
  checkRow,
  checkWeight,
  type LearnerSnapshot,
} from './learner.js';
import { impurity, type SplitCriterion, splitMerit } from './split-merit.js';

/**
 * Hoeffding tree classifier — Domingos & Hulten, "Mining high-speed data streams", KDD 2000 (VFDT).
 *
 * A leaf collects sufficient statistics; every `checkInterval` units of weight it ranks candidate splits
 * by merit G (information gain, or Gini reduction) and splits on the best attribute when
 *   G(best) − G(second best) > ε  or  ε < τ,   with ε = √(R² ln(1/δ) / 2n)   (the Hoeffding bound, eq. 1),
 * R = log₂(classes) for information gain and 1 for Gini. Numeric attributes keep one Gaussian per class
 * and test `candidateThresholds` evenly spaced thresholds between the observed minimum and maximum
 * (Pfahringer, Holmes & Kirkby, "Handling numeric attributes in Hoeffding trees", PAKDD 2008).
 * Nominal attributes keep class counts per category and split multiway. Leaves predict by the majority
 * class, by naive Bayes over their statistics, or adaptively by whichever of the two has been right more
 * often at that leaf (Holmes, Kirkby & Pfahringer, "Stress-testing Hoeffding trees", PKDD 2005).
 * A memory cap deactivates the least promising leaves (weight × error of the majority class, as in
 * VFDT §3): they keep their class counts and predict the majority class, but stop collecting statistics.
 * Missing values (NaN) are skipped in statistics and follow the branch that most weight has taken.
 *
 * Layout, for speed: nodes are columns of typed arrays. Every leaf has a row of `heads`
 *   [last attempt, majority right, naive Bayes right, weight seen | class counts (C)],
 * and every active leaf one slot of the `stats` pool with its attribute statistics: numeric statistics
 * per class are [weight, mean, M2, min, max, 1/variance] (West's weighted Welford), nominal statistics
 * are counts[category][class] followed by per-class totals. Deactivating a leaf frees its slot.
 *
 * @example
 * const tree = new HoeffdingTree(schema, { leafModel: 'adaptive' }, 7);
 * const predicted = tree.scoreTrain(rows, i * width, label, 1, probabilities, 0);
 */

export type LeafModel = 'majority' | 'naive-bayes' | 'adaptive';

export interface HoeffdingTreeOptions {
  /** Weight a leaf must see between split attempts (n_min). Domingos & Hulten: 200. */
  readonly checkInterval: number;
  /** Confidence δ of the Hoeffding bound. Domingos & Hulten: 1e-7. */
  readonly hoeffdingDelta: number;
  /** Tie threshold τ: split anyway when ε falls below it. Domingos & Hulten: 0.05. */
  readonly tieBreak: number;
  readonly merit: SplitCriterion;
  readonly leafModel: LeafModel;
  /** Candidate thresholds per numeric attribute (Pfahringer et al. 2008 use 10). */
  readonly candidateThresholds: number;
  /** Attributes a leaf considers for its split, drawn at random per leaf; 0 = all (forest-style when > 0). */
  readonly featureSubset: number;
  /** Maximum depth of a leaf (the root has depth 0); leaves at this depth stop splitting. */
  readonly depthLimit: number;
  /** Memory cap in bytes for leaf statistics and nodes; the least promising leaves are deactivated above it. */
  readonly byteLimit: number;
  /** Smallest share of weight each of two branches must get for a split to count (common practice: 0.01). */
  readonly branchShareFloor: number;
}

export const HOEFFDING_TREE_DEFAULTS: HoeffdingTreeOptions = {
  checkInterval: 200,
  hoeffdingDelta: 1e-7,
  tieBreak: 0.05,
  merit: 'info-gain',
  leafModel: 'adaptive',
  candidateThresholds: 10,
  featureSubset: 0,
  depthLimit: 30,
  byteLimit: 256 * 1024,
  branchShareFloor: 0.01,
};

const KIND = 'hoeffding-tree';
const VERSION = 2;

// Leaf head.
const H_LAST_ATTEMPT = 0;
const H_MC_CORRECT = 1;
const H_NB_CORRECT = 2;
const H_SEEN = 3;
const HEAD = 4;
// Numeric statistics per class.
const G_W = 0;
const G_MEAN = 1;
const G_M2 = 2;
const G_MIN = 3;
const G_MAX = 4;
const G_INV_VAR = 5;
const GAUSS = 6;
/** Variance floor for naive-Bayes densities of a class seen with a single value. */
const MIN_VARIANCE = 1e-9;
/** Bytes per node: feature, first child, child count, leaf, depth, major child (int32); threshold, weight. */
const NODE_BYTES = 4 * 6 + 8 * 2;
const PREDICT_MAJORITY = 0;
const PREDICT_NB = 1;
const PREDICT_ADAPTIVE = 2;
/** Weight trained between two checks of the memory cap, in check intervals. */
const MEMORY_CHECK_GRACE_PERIODS = 10;

function validate(o: HoeffdingTreeOptions, width: number): HoeffdingTreeOptions {
  integerAtLeast(KIND, 'checkInterval', o.checkInterval, 1);
  openUnit(KIND, 'hoeffdingDelta', o.hoeffdingDelta);
  nonNegative(KIND, 'tieBreak', o.tieBreak);
  oneOf(KIND, 'merit', o.merit, ['info-gain', 'gini'] as const);
  oneOf(KIND, 'leafModel', o.leafModel, ['majority', 'naive-bayes', 'adaptive'] as const);
  integerAtLeast(KIND, 'candidateThresholds', o.candidateThresholds, 1);
  integerAtLeast(KIND, 'featureSubset', o.featureSubset, 0);
  if (o.featureSubset > width) {
    throw new ShoalError(
      'invalid-parameter',
      `${KIND}: featureSubset must be at most the ${width} features of the schema, got ${o.featureSubset}`,
    );
  }
  integerAtLeast(KIND, 'depthLimit', o.depthLimit, 0);
  positive(KIND, 'byteLimit', o.byteLimit);
  if (!(o.branchShareFloor >= 0 && o.branchShareFloor < 0.5)) {
    throw new ShoalError(
      'invalid-parameter',
      `${KIND}: branchShareFloor must be in [0, 0.5), got ${o.branchShareFloor}`,
    );
  }
  return o;
}

interface TreeState {
  readonly classes: number;
  readonly nodes: number;
  readonly leaves: number;
  readonly feature: string;
  readonly threshold: string;
  readonly firstChild: string;
  readonly childCount: string;
  readonly leafOf: string;
  readonly depth: string;
  readonly weight: string;
  readonly majorChild: string;
  readonly heads: string;
  /** Attribute statistics of each leaf, or null for an inactive leaf. */
  readonly stats: readonly (string | null)[];
  readonly subsets: string | null;
  readonly rng: RngState;
}

function grownI32(a: Int32Array, size: number): Int32Array<ArrayBuffer> {
  const b = new Int32Array(size);
  b.set(a.subarray(0, Math.min(a.length, size)));
  return b;
}

function grownF64(a: Float64Array, size: number): Float64Array<ArrayBuffer> {
  const b = new Float64Array(size);
  b.set(a.subarray(0, Math.min(a.length, size)));
  return b;
}

export class HoeffdingTree implements Classifier {
  readonly kind = KIND;
  readonly schema: FeatureSchema;
  readonly options: HoeffdingTreeOptions;
  private readonly width: number;
  private readonly nominal: Uint8Array;
  private readonly cardinality: Int32Array;
  private readonly mode: number;
  /** Features a leaf considers: all, or a random subset of this size. */
  private readonly perLeaf: number;
  private rng: Rng;
  private c = 1;

  // Nodes (columns).
  private nodeCount = 0;
  private feature = new Int32Array(16);
  private threshold = new Float64Array(16);
  private firstChild = new Int32Array(16);
  private childCount = new Int32Array(16);
  private leafOf = new Int32Array(16);
  private depth = new Int32Array(16);
  private weight = new Float64Array(16);
  private majorChild = new Int32Array(16);

  // Leaves: heads for all, a stats slot for the active ones.
  private leafCount = 0;
  private headSize = HEAD + 1;
  private heads = new Float64Array(16 * (HEAD + 1));
  private slotOf = new Int32Array(16);
  /** Per-leaf feature lists (leaf × perLeaf), or null when every leaf considers every feature. */
  private subsets: Int32Array | null;
  private slotSize = 0;
  private stats = new Float64Array(0);
  private slotCapacity = 0;
  private freeSlots = new Int32Array(16);
  private freeCount = 0;
  private activeSlots = 0;
  private sinceMemoryCheck = 0;

  // Scratch (per class), reused every row.
  private logp = new Float64Array(1);
  private sq = new Float64Array(1);
  private prod = new Float64Array(1);
  private probe = new Float64Array(1);
  private pair = new Float64Array(2);
  private scale = new Float64Array(1);
  private readonly all: Int32Array;
  private lastMajority = -1;
  private lastNb = -1;

  constructor(schema: FeatureSchema, options: Partial<HoeffdingTreeOptions> = {}, seed: Seed = 0) {
    this.schema = checkSchema(KIND, schema);
    this.width = schema.features.length;
    this.options = validate({ ...HOEFFDING_TREE_DEFAULTS, ...options }, this.width);
    this.nominal = Uint8Array.from(schema.features, (f) => (f.kind === 'nominal' ? 1 : 0));
    this.cardinality = Int32Array.from(schema.features, (f) => (f.kind === 'nominal' ? f.values : 0));
    this.mode =
      this.options.leafModel === 'majority'
        ? PREDICT_MAJORITY
        : this.options.leafModel === 'naive-bayes'
          ? PREDICT_NB
          : PREDICT_ADAPTIVE;
    const m = this.options.featureSubset;
    this.perLeaf = m === 0 ? this.width : m;
    this.subsets = m === 0 || m >= this.width ? null : new Int32Array(16 * m);
    this.rng = new Rng(seed);
    this.all = Int32Array.from({ length: this.width }, (_, i) => i);
    this.slotSize = this.statSlotSize(1);
    this.addLeafNode(0, null, -1);
  }

  get classes(): number {
    return this.c;
  }

  /** Number of nodes, leaves and active leaves, and the depth reached. */
  get shape(): { nodes: number; leaves: number; activeLeaves: number; depth: number } {
    let depth = 0;
    for (let n = 0; n < this.nodeCount; n++)
      if (this.feature[n]! < 0) depth = Math.max(depth, this.depth[n]!);
    return { nodes: this.nodeCount, leaves: this.leafCount, activeLeaves: this.activeSlots, depth };
  }

  ensureClasses(n: number): void {
    if (n <= this.c) return;
    checkLabel(KIND, n - 1);
    this.relayout(n);
  }

  score(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    checkRow(KIND, row, offset, this.width);
    checkOut(KIND, out, outOffset, this.c);
    const leaf = this.leafOf[this.route(row, offset, 0)]!;
    return this.predictAt(leaf, row, offset, out, outOffset, false);
  }

  train(row: Float64Array, offset: number, label: number, weight: number): void {
    checkRow(KIND, row, offset, this.width);
    checkLabel(KIND, label);
    checkWeight(KIND, weight);
    if (weight === 0) return;
    if (label >= this.c) this.ensureClasses(label + 1);
    const node = this.route(row, offset, weight);
    this.learnAt(node, row, offset, label, weight, -1, -1);
  }

  scoreTrain(
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
    out: Float64Array,
    outOffset: number,
  ): number {
    checkRow(KIND, row, offset, this.width);
    checkLabel(KIND, label);
    checkWeight(KIND, weight);
    checkOut(KIND, out, outOffset, this.c);
    const node = this.route(row, offset, weight);
    const predicted = this.predictAt(this.leafOf[node]!, row, offset, out, outOffset, weight > 0);
    if (weight > 0) {
      const majority = this.lastMajority;
      const nb = this.lastNb;
      if (label >= this.c) this.ensureClasses(label + 1);
      this.learnAt(node, row, offset, label, weight, majority, nb);
    }
    return predicted;
  }

  sizeBytes(): number {
    return (
      this.nodeCount * NODE_BYTES + this.leafCount * this.headSize * 8 + this.activeSlots * this.slotSize * 8
    );
  }

  snapshot(): LearnerSnapshot {
    const n = this.nodeCount;
    const stats: (string | null)[] = [];
    for (let leaf = 0; leaf < this.leafCount; leaf++) {
      const slot = this.slotOf[leaf]!;
      stats.push(
        slot < 0 ? null : encodeF64(this.stats.subarray(slot * this.slotSize, (slot + 1) * this.slotSize)),
      );
    }
    const state: TreeState = {
      classes: this.c,
      nodes: n,
      leaves: this.leafCount,
      feature: encodeI32(this.feature.subarray(0, n)),
      threshold: encodeF64(this.threshold.subarray(0, n)),
      firstChild: encodeI32(this.firstChild.subarray(0, n)),
      childCount: encodeI32(this.childCount.subarray(0, n)),
      leafOf: encodeI32(this.leafOf.subarray(0, n)),
      depth: encodeI32(this.depth.subarray(0, n)),
      weight: encodeF64(this.weight.subarray(0, n)),
      majorChild: encodeI32(this.majorChild.subarray(0, n)),
      heads: encodeF64(this.heads.subarray(0, this.leafCount * this.headSize)),
      stats,
      subsets:
        this.subsets === null ? null : encodeI32(this.subsets.subarray(0, this.leafCount * this.perLeaf)),
      rng: this.rng.state(),
    };
    return { kind: KIND, version: VERSION, schema: this.schema, options: { ...this.options }, state };
  }

  static restore(snapshot: LearnerSnapshot): HoeffdingTree {
    checkSnapshot(snapshot, KIND, VERSION);
    const s = snapshot.state as TreeState;
    const tree = new HoeffdingTree(snapshot.schema, snapshot.options as Partial<HoeffdingTreeOptions>);
    tree.ensureClasses(s.classes);
    const cap = Math.max(16, s.nodes);
    const i32 = (text: string, what: string) => grownI32(decodeI32(text, `${KIND} ${what}`), cap);
    const f64 = (text: string, what: string) => grownF64(decodeF64(text, `${KIND} ${what}`), cap);
    tree.nodeCount = s.nodes;
    tree.feature = i32(s.feature, 'feature');
    tree.threshold = f64(s.threshold, 'threshold');
    tree.firstChild = i32(s.firstChild, 'firstChild');
    tree.childCount = i32(s.childCount, 'childCount');
    tree.leafOf = i32(s.leafOf, 'leafOf');
    tree.depth = i32(s.depth, 'depth');
    tree.weight = f64(s.weight, 'weight');
    tree.majorChild = i32(s.majorChild, 'majorChild');
    const leaves = Math.max(16, s.leaves);
    tree.leafCount = s.leaves;
    tree.heads = grownF64(decodeF64(s.heads, `${KIND} heads`), leaves * tree.headSize);
    tree.slotOf = new Int32Array(leaves).fill(-1);
    if (tree.subsets !== null && s.subsets !== null) {
      tree.subsets = grownI32(decodeI32(s.subsets, `${KIND} subsets`), leaves * tree.perLeaf);
    }
    tree.stats = new Float64Array(0);
    tree.slotCapacity = 0;
    tree.activeSlots = 0;
    tree.freeCount = 0;
    s.stats.forEach((text, leaf) => {
      if (text === null) return;
      const slot = tree.allocateSlot();
      tree.stats.set(decodeF64(text, `${KIND} stats`), slot * tree.slotSize);
      tree.slotOf[leaf] = slot;
    });
    tree.rng = Rng.fromState(s.rng);
    return tree;
  }

  // ---- routing -------------------------------------------------------------------------------

  /** Walk from the root to a leaf; when `credit` > 0, add it to the weight of every node passed. */
  private route(row: Float64Array, offset: number, credit: number): number {
    const feature = this.feature;
    const threshold = this.threshold;
    const firstChild = this.firstChild;
    let n = 0;
    let f = feature[0]!;
    while (f >= 0) {
      const x = row[offset + f]!;
      let next: number;
      if (this.nominal[f] === 0) {
        next =
          x <= threshold[n]! ? firstChild[n]! : x > threshold[n]! ? firstChild[n]! + 1 : this.majorChild[n]!;
      } else {
        next = x >= 0 && x < this.childCount[n]! ? firstChild[n]! + x : this.majorChild[n]!;
      }
      if (credit > 0) this.credit(n, next, credit);
      n = next;
      f = feature[n]!;
    }
    return n;
  }

  /** Add weight to the branch `next` of `n`; it becomes the branch missing values follow if heaviest. */
  private credit(n: number, next: number, weight: number): void {
    const w = this.weight;
    w[next]! += weight;
    if (w[next]! > w[this.majorChild[n]!]!) this.majorChild[n] = next;
  }

  // ---- prediction ----------------------------------------------------------------------------

  /**
   * Predict at a leaf. With `bookkeeping`, also remember the majority and naive-Bayes answers, which
   * training needs to keep the adaptive leaf's score of both.
   */
  private predictAt(
    leaf: number,
    row: Float64Array,
    offset: number,
    out: Float64Array,
    outOffset: number,
    bookkeeping: boolean,
  ): number {
    const head = leaf * this.headSize;
    const slot = this.slotOf[leaf]!;
    if (this.mode === PREDICT_MAJORITY || slot < 0) {
      this.lastNb = -1;
      this.lastMajority = this.majorityInto(head, out, outOffset);
      return this.lastMajority;
    }
    const heads = this.heads;
    if (this.mode === PREDICT_NB || heads[head + H_NB_CORRECT]! > heads[head + H_MC_CORRECT]!) {
      const nb = this.naiveBayesInto(leaf, head, slot, row, offset, out, outOffset);
      this.lastNb = nb;
      if (bookkeeping) this.lastMajority = this.majorityClass(head);
      return nb;
    }
    const majority = this.majorityInto(head, out, outOffset);
    this.lastMajority = majority;
    // Adaptive with the majority chosen: training still needs the naive-Bayes answer to keep score.
    this.lastNb = bookkeeping ? this.naiveBayesInto(leaf, head, slot, row, offset, this.probe, 0) : -1;
    return majority;
  }

  private majorityClass(head: number): number {
    const heads = this.heads;
    let best = 0;
    let bestCount = heads[head + HEAD]!;
    for (let k = 1; k < this.c; k++) {
      const v = heads[head + HEAD + k]!;
      if (v > bestCount) {
        bestCount = v;
        best = k;
      }
    }
    return best;
  }

  /** Write the normalised class counts; returns the majority class. */
  private majorityInto(head: number, out: Float64Array, outOffset: number): number {
    const heads = this.heads;
    const c = this.c;
    let total = 0;
    for (let k = 0; k < c; k++) total += heads[head + HEAD + k]!;
    if (total > 0) {
      const inv = 1 / total;
      for (let k = 0; k < c; k++) out[outOffset + k] = heads[head + HEAD + k]! * inv;
    } else {
      const u = 1 / c;
      for (let k = 0; k < c; k++) out[outOffset + k] = u;
    }
    return this.majorityClass(head);
  }

  /**
   * Naive Bayes over the leaf's statistics, in log space with one logarithm per class:
   * log p(k | x) = ½ log(n_k² · Π 1/σ² · Π P(v | k)²) − ½ Σ (x − μ)²/σ² + constant.
   */
  private naiveBayesInto(
    leaf: number,
    head: number,
    slot: number,
    row: Float64Array,
    offset: number,
    out: Float64Array,
    outOffset: number,
  ): number {
    if (this.c === 2) return this.naiveBayesBinary(leaf, head, slot, row, offset, out, outOffset);
    const c = this.c;
    const heads = this.heads;
    const stats = this.stats;
    const sq = this.sq;
    const prod = this.prod;
    for (let k = 0; k < c; k++) {
      const n = heads[head + HEAD + k]!;
      sq[k] = 0;
      prod[k] = n * n;
    }
    const subset = this.subsets;
    const per = this.perLeaf;
    let base = slot * this.slotSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      const x = row[offset + f]!;
      if (this.nominal[f] === 0) {
        if (!Number.isNaN(x)) {
          for (let k = 0, g = base; k < c; k++, g += GAUSS) {
            if (stats[g + G_W]! > 0) {
              const d = x - stats[g + G_MEAN]!;
              const iv = stats[g + G_INV_VAR]!;
              sq[k]! += d * d * iv;
              prod[k]! *= iv;
            }
          }
        }
        base += GAUSS * c;
      } else {
        const v = this.cardinality[f]!;
        if (x >= 0 && x < v) {
          const cell = base + x * c;
          const totals = base + v * c;
          for (let k = 0; k < c; k++) {
            const p = (stats[cell + k]! + 1) / (stats[totals + k]! + v);
            prod[k]! *= p * p;
          }
        }
        base += (v + 1) * c;
      }
    }
    const logp = this.logp;
    let best = 0;
    let max = Number.NEGATIVE_INFINITY;
    for (let k = 0; k < c; k++) {
      const p = prod[k]!;
      const lp =
        p > 0 && p < Number.POSITIVE_INFINITY
          ? 0.5 * (Math.log(p) - sq[k]!)
          : this.slowLog(leaf, head, slot, row, offset, k);
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
   * P(1 | x) = 1 / (1 + √(π₀/π₁) · e^(−(s₀ − s₁)/2)). Falls back to the general form when a product
   * under- or overflows.
   */
  private naiveBayesBinary(
    leaf: number,
    head: number,
    slot: number,
    row: Float64Array,
    offset: number,
    out: Float64Array,
    outOffset: number,
  ): number {
    const stats = this.stats;
    const n0 = this.heads[head + HEAD]!;
    const n1 = this.heads[head + HEAD + 1]!;
    let s0 = 0;
    let s1 = 0;
    let p0 = n0 * n0;
    let p1 = n1 * n1;
    const subset = this.subsets;
    const per = this.perLeaf;
    let base = slot * this.slotSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      const x = row[offset + f]!;
      if (this.nominal[f] === 0) {
        if (!Number.isNaN(x)) {
          if (stats[base + G_W]! > 0) {
            const d = x - stats[base + G_MEAN]!;
            const iv = stats[base + G_INV_VAR]!;
            s0 += d * d * iv;
            p0 *= iv;
          }
          const g = base + GAUSS;
          if (stats[g + G_W]! > 0) {
            const d = x - stats[g + G_MEAN]!;
            const iv = stats[g + G_INV_VAR]!;
            s1 += d * d * iv;
            p1 *= iv;
          }
        }
        base += 2 * GAUSS;
      } else {
        const v = this.cardinality[f]!;
        if (x >= 0 && x < v) {
          const cell = base + x * 2;
          const totals = base + v * 2;
          const q0 = (stats[cell]! + 1) / (stats[totals]! + v);
          const q1 = (stats[cell + 1]! + 1) / (stats[totals + 1]! + v);
          p0 *= q0 * q0;
          p1 *= q1 * q1;
        }
        base += (v + 1) * 2;
      }
    }
    let one: number;
    if (n0 === 0 || n1 === 0) {
      one = n0 === n1 ? 0.5 : n0 === 0 ? 1 : 0;
    } else if (p0 > 0 && p1 > 0 && p0 < Number.POSITIVE_INFINITY && p1 < Number.POSITIVE_INFINITY) {
      one = 1 / (1 + Math.sqrt(p0 / p1) * Math.exp(-0.5 * (s0 - s1)));
    } else {
      one = this.binaryFromLogs(leaf, head, slot, row, offset);
    }
    out[outOffset] = 1 - one;
    out[outOffset + 1] = one;
    return one > 0.5 ? 1 : 0;
  }

  /** P(1 | x) from the term-by-term log scores, for products out of floating-point range. */
  private binaryFromLogs(
    leaf: number,
    head: number,
    slot: number,
    row: Float64Array,
    offset: number,
  ): number {
    const l0 = this.slowLog(leaf, head, slot, row, offset, 0);
    const l1 = this.slowLog(leaf, head, slot, row, offset, 1);
    return 1 / (1 + Math.exp(l0 - l1));
  }

  /** The same log-score for one class summed term by term, for when the product under- or overflows. */
  private slowLog(
    leaf: number,
    head: number,
    slot: number,
    row: Float64Array,
    offset: number,
    k: number,
  ): number {
    const c = this.c;
    const stats = this.stats;
    const count = this.heads[head + HEAD + k]!;
    if (!(count > 0)) return Number.NEGATIVE_INFINITY;
    let lp = Math.log(count);
    const subset = this.subsets;
    const per = this.perLeaf;
    let base = slot * this.slotSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      const x = row[offset + f]!;
      if (this.nominal[f] === 0) {
        const g = base + k * GAUSS;
        if (!Number.isNaN(x) && stats[g + G_W]! > 0) {
          const d = x - stats[g + G_MEAN]!;
          const iv = stats[g + G_INV_VAR]!;
          lp += 0.5 * Math.log(iv) - 0.5 * d * d * iv;
        }
        base += GAUSS * c;
      } else {
        const v = this.cardinality[f]!;
        if (x >= 0 && x < v) lp += Math.log((stats[base + x * c + k]! + 1) / (stats[base + v * c + k]! + v));
        base += (v + 1) * c;
      }
    }
    return lp;
  }

  // ---- learning ------------------------------------------------------------------------------

  /**
   * Update the leaf at `node` with a labelled row. `majority` and `nb` are the answers the leaf gave
   * when the row was scored (−1 when it was not), needed for the adaptive leaf bookkeeping.
   */
  private learnAt(
    node: number,
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
    majority: number,
    nb: number,
  ): void {
    const leaf = this.leafOf[node]!;
    const head = leaf * this.headSize;
    const heads = this.heads;
    const slot = this.slotOf[leaf]!;
    if (this.mode === PREDICT_ADAPTIVE && slot >= 0) {
      if (majority < 0) {
        this.predictAt(leaf, row, offset, this.probe, 0, true);
        majority = this.lastMajority;
        nb = this.lastNb;
      }
      if (majority === label) heads[head + H_MC_CORRECT]! += weight;
      if (nb === label) heads[head + H_NB_CORRECT]! += weight;
    }
    heads[head + HEAD + label]! += weight;
    heads[head + H_SEEN]! += weight;
    const seen = heads[head + H_SEEN]!;
    if (slot < 0) return;
    this.observe(leaf, slot, row, offset, label, weight);
    if (seen - heads[head + H_LAST_ATTEMPT]! >= this.options.checkInterval) {
      heads[head + H_LAST_ATTEMPT] = seen;
      if (this.depth[node]! < this.options.depthLimit) this.attemptSplit(node, leaf);
    }
    this.sinceMemoryCheck += weight;
    if (this.sinceMemoryCheck >= MEMORY_CHECK_GRACE_PERIODS * this.options.checkInterval) {
      this.sinceMemoryCheck = 0;
      if (this.sizeBytes() > this.options.byteLimit) this.enforceMemoryCap();
    }
  }

  private observe(
    leaf: number,
    slot: number,
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
  ): void {
    const c = this.c;
    const stats = this.stats;
    const subset = this.subsets;
    const per = this.perLeaf;
    let base = slot * this.slotSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      const x = row[offset + f]!;
      if (this.nominal[f] === 0) {
        if (!Number.isNaN(x)) {
          const g = base + label * GAUSS;
          const before = stats[g + G_W]!;
          const total = before + weight;
          const mean = stats[g + G_MEAN]!;
          const delta = x - mean;
          const next = mean + (weight / total) * delta;
          const m2 = stats[g + G_M2]! + weight * delta * (x - next);
          stats[g + G_W] = total;
          stats[g + G_MEAN] = next;
          stats[g + G_M2] = m2;
          if (before === 0) {
            stats[g + G_MIN] = x;
            stats[g + G_MAX] = x;
          } else if (x < stats[g + G_MIN]!) {
            stats[g + G_MIN] = x;
          } else if (x > stats[g + G_MAX]!) {
            stats[g + G_MAX] = x;
          }
          stats[g + G_INV_VAR] = m2 > MIN_VARIANCE * total ? total / m2 : 1 / MIN_VARIANCE;
        }
        base += GAUSS * c;
      } else {
        const v = this.cardinality[f]!;
        if (x >= 0 && x < v) {
          stats[base + x * c + label]! += weight;
          stats[base + v * c + label]! += weight;
        }
        base += (v + 1) * c;
      }
    }
  }

  /** Rank candidate splits at a leaf and split when the Hoeffding bound says the best is best. */
  private attemptSplit(node: number, leaf: number): void {
    const c = this.c;
    const heads = this.heads;
    const head = leaf * this.headSize;
    let seenClasses = 0;
    let total = 0;
    for (let k = 0; k < c; k++) {
      const v = heads[head + HEAD + k]!;
      if (v > 0) seenClasses++;
      total += v;
    }
    if (seenClasses < 2) return;
    const o = this.options;
    const range = o.merit === 'gini' ? 1 : Math.log2(c);
    const epsilon = hoeffdingBound(range, o.hoeffdingDelta, total);
    const stats = this.stats;
    const subset = this.subsets;
    const per = this.perLeaf;
    let bestMerit = 0;
    let bestFeature = -1;
    let bestThreshold = 0;
    let second = 0;
    let base = this.slotOf[leaf]! * this.slotSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      let merit: number;
      if (this.nominal[f] === 0) {
        merit = this.bestThreshold(base);
        base += GAUSS * c;
      } else {
        const v = this.cardinality[f]!;
        const parent = impurity(o.merit, stats, base + v * c, c);
        merit = splitMerit(o.merit, stats, base, v, c, o.branchShareFloor, parent);
        this.cut = 0;
        base += (v + 1) * c;
      }
      if (merit > bestMerit) {
        second = bestMerit;
        bestMerit = merit;
        bestFeature = f;
        bestThreshold = this.cut;
      } else if (merit > second) {
        second = merit;
      }
    }
    if (bestFeature >= 0 && (bestMerit - second > epsilon || epsilon < o.tieBreak)) {
      this.split(node, leaf, bestFeature, bestThreshold);
    }
  }

  /** The threshold of the last `bestThreshold` call. */
  private cut = 0;

  /**
   * Best merit over `candidateThresholds` evenly spaced thresholds for the Gaussian statistics at
   * `base`; leaves the threshold in `this.cut`.
   */
  private bestThreshold(base: number): number {
    const c = this.c;
    const stats = this.stats;
    const pair = this.pair;
    const scale = this.scale;
    const o = this.options;
    let lo = Number.POSITIVE_INFINITY;
    let hi = Number.NEGATIVE_INFINITY;
    for (let k = 0, g = base; k < c; k++, g += GAUSS) {
      const w = stats[g + G_W]!;
      pair[c + k] = w;
      if (w > 0) {
        if (stats[g + G_MIN]! < lo) lo = stats[g + G_MIN]!;
        if (stats[g + G_MAX]! > hi) hi = stats[g + G_MAX]!;
        // 1 / (σ√2), so that Φ((t − μ)/σ) = erfc((μ − t) · scale) / 2; 0 marks a class without spread.
        const variance = stats[g + G_M2]! / w;
        scale[k] = variance > 0 ? 1 / Math.sqrt(2 * variance) : 0;
      }
    }
    this.cut = 0;
    if (!(hi > lo)) return 0;
    const parent = impurity(o.merit, pair, c, c);
    const n = o.candidateThresholds;
    const step = (hi - lo) / (n + 1);
    let merit = 0;
    for (let i = 1; i <= n; i++) {
      const t = lo + step * i;
      for (let k = 0, g = base; k < c; k++, g += GAUSS) {
        const w = stats[g + G_W]!;
        let below: number;
        if (w <= 0 || t < stats[g + G_MIN]!) below = 0;
        else if (t >= stats[g + G_MAX]!) below = w;
        else if (scale[k] === 0) below = stats[g + G_MEAN]! <= t ? w : 0;
        else below = 0.5 * w * erfc((stats[g + G_MEAN]! - t) * scale[k]!);
        pair[k] = below;
        pair[c + k] = Math.max(w - below, 0);
      }
      const m = splitMerit(o.merit, pair, 0, 2, c, o.branchShareFloor, parent);
      if (m > merit) {
        merit = m;
        this.cut = t;
      }
    }
    return merit;
  }

  /** Estimated weight of one class at or below `t`, from its Gaussian and its observed range. */
  private weightBelow(g: number, t: number): number {
    const stats = this.stats;
    const w = stats[g + G_W]!;
    if (w <= 0 || t < stats[g + G_MIN]!) return 0;
    if (t >= stats[g + G_MAX]!) return w;
    const variance = stats[g + G_M2]! / w;
    if (!(variance > 0)) return stats[g + G_MEAN]! <= t ? w : 0;
    return w * normalCdf(t, stats[g + G_MEAN]!, Math.sqrt(variance));
  }

  /** Turn a leaf into an internal node with fresh leaves below it. */
  private split(node: number, leaf: number, f: number, threshold: number): void {
    const c = this.c;
    const stats = this.stats;
    const branches = this.nominal[f] === 1 ? this.cardinality[f]! : 2;
    const childDepth = this.depth[node]! + 1;
    // Locate the attribute's statistics to seed the children's class counts.
    const subset = this.subsets;
    const per = this.perLeaf;
    let base = this.slotOf[leaf]! * this.slotSize;
    for (let j = 0; j < per; j++) {
      const g = subset === null ? j : subset[leaf * per + j]!;
      if (g === f) break;
      base += this.nominal[g] === 1 ? (this.cardinality[g]! + 1) * c : GAUSS * c;
    }
    const seeds = new Float64Array(branches * c);
    for (let b = 0; b < branches; b++) {
      for (let k = 0; k < c; k++) {
        if (this.nominal[f] === 1) {
          seeds[b * c + k] = stats[base + b * c + k]!;
        } else {
          const below = this.weightBelow(base + k * GAUSS, threshold);
          seeds[b * c + k] = b === 0 ? below : Math.max(0, stats[base + k * GAUSS + G_W]! - below);
        }
      }
    }
    // The split node gives up its leaf: the first child takes over the leaf's index, with a fresh slot.
    this.releaseSlot(leaf);
    this.feature[node] = f;
    this.threshold[node] = threshold;
    this.childCount[node] = branches;
    this.leafOf[node] = -1;
    let heaviest = -1;
    let heaviestWeight = -1;
    for (let b = 0; b < branches; b++) {
      const child = this.addLeafNode(childDepth, seeds.subarray(b * c, (b + 1) * c), b === 0 ? leaf : -1);
      if (b === 0) this.firstChild[node] = child;
      const w = this.weight[child]!;
      if (w > heaviestWeight) {
        heaviestWeight = w;
        heaviest = child;
      }
    }
    this.majorChild[node] = heaviest;
  }

  /** Append a leaf node (taking over leaf index `reuse` when ≥ 0); returns the node index. */
  private addLeafNode(depth: number, counts: Float64Array | null, reuse: number): number {
    if (this.nodeCount === this.feature.length) this.growNodes();
    const n = this.nodeCount++;
    this.feature[n] = -1;
    this.threshold[n] = 0;
    this.firstChild[n] = -1;
    this.childCount[n] = 0;
    this.depth[n] = depth;
    this.majorChild[n] = -1;
    let leaf = reuse;
    if (leaf < 0) {
      leaf = this.leafCount++;
      if (leaf * this.headSize >= this.heads.length) this.growLeaves();
    }
    const head = leaf * this.headSize;
    this.heads.fill(0, head, head + this.headSize);
    let w = 0;
    if (counts !== null) {
      this.heads.set(counts, head + HEAD);
      for (let k = 0; k < counts.length; k++) w += counts[k]!;
    }
    this.weight[n] = w;
    if (this.subsets !== null) this.drawSubset(leaf);
    this.slotOf[leaf] = this.allocateSlot();
    this.leafOf[n] = leaf;
    return n;
  }

  private drawSubset(leaf: number): void {
    const order = Int32Array.from(this.all);
    this.rng.shuffle(order);
    const per = this.perLeaf;
    this.subsets!.set(order.subarray(0, per).sort(), leaf * per);
  }

  /** Size of a stats slot for `c` classes: room for the largest attribute set a leaf may hold. */
  private statSlotSize(c: number): number {
    const sizes = Array.from(this.all, (f) =>
      this.nominal[f] === 1 ? (this.cardinality[f]! + 1) * c : GAUSS * c,
    );
    sizes.sort((a, b) => b - a);
    return sizes.slice(0, this.perLeaf).reduce((a, b) => a + b, 0);
  }

  private allocateSlot(): number {
    let slot: number;
    if (this.freeCount > 0) {
      slot = this.freeSlots[--this.freeCount]!;
      this.stats.fill(0, slot * this.slotSize, (slot + 1) * this.slotSize);
    } else {
      slot = this.activeSlots + this.freeCount;
      if (slot >= this.slotCapacity) {
        this.slotCapacity = Math.max(4, this.slotCapacity * 2);
        this.stats = grownF64(this.stats, this.slotCapacity * this.slotSize);
        this.freeSlots = grownI32(this.freeSlots, this.slotCapacity);
      }
    }
    this.activeSlots++;
    return slot;
  }

  private releaseSlot(leaf: number): void {
    const slot = this.slotOf[leaf]!;
    if (slot < 0) return;
    this.freeSlots[this.freeCount++] = slot;
    this.activeSlots--;
    this.slotOf[leaf] = -1;
  }

  private growNodes(): void {
    const cap = this.feature.length * 2;
    this.feature = grownI32(this.feature, cap);
    this.threshold = grownF64(this.threshold, cap);
    this.firstChild = grownI32(this.firstChild, cap);
    this.childCount = grownI32(this.childCount, cap);
    this.leafOf = grownI32(this.leafOf, cap);
    this.depth = grownI32(this.depth, cap);
    this.weight = grownF64(this.weight, cap);
    this.majorChild = grownI32(this.majorChild, cap);
  }

  private growLeaves(): void {
    const cap = Math.max(16, this.slotOf.length * 2);
    this.heads = grownF64(this.heads, cap * this.headSize);
    this.slotOf = grownI32(this.slotOf, cap);
    if (this.subsets !== null) this.subsets = grownI32(this.subsets, cap * this.perLeaf);
  }

  // ---- memory cap ----------------------------------------------------------------------------

  /** A leaf's promise: the weight its majority class gets wrong (VFDT §3, "p_l e_l"). */
  private promise(leaf: number): number {
    const head = leaf * this.headSize;
    let total = 0;
    let max = 0;
    for (let k = 0; k < this.c; k++) {
      const v = this.heads[head + HEAD + k]!;
      total += v;
      if (v > max) max = v;
    }
    return total - max;
  }

  /**
   * Deactivate the least promising active leaves until the tree fits its cap, then reactivate the most
   * promising inactive leaves while they fit.
   */
  private enforceMemoryCap(): void {
    const leaves = Array.from({ length: this.leafCount }, (_, i) => i);
    const promise = leaves.map((l) => this.promise(l));
    leaves.sort((a, b) => promise[a]! - promise[b]! || a - b);
    const cap = this.options.byteLimit;
    for (const leaf of leaves) {
      if (this.sizeBytes() <= cap) break;
      this.releaseSlot(leaf);
    }
    const slotBytes = this.slotSize * 8;
    for (let i = leaves.length - 1; i >= 0 && this.sizeBytes() + slotBytes <= cap; i--) {
      const leaf = leaves[i]!;
      if (this.slotOf[leaf]! >= 0) continue;
      const head = leaf * this.headSize;
      this.heads[head + H_MC_CORRECT] = 0;
      this.heads[head + H_NB_CORRECT] = 0;
      this.heads[head + H_LAST_ATTEMPT] = this.heads[head + H_SEEN]!;
      this.slotOf[leaf] = this.allocateSlot();
    }
  }

  /** Move every per-class statistic into a layout for `to` classes. */
  private relayout(to: number): void {
    const from = this.c;
    const oldHeadSize = this.headSize;
    const oldSlotSize = this.slotSize;
    const oldHeads = this.heads;
    const oldStats = this.stats;
    this.c = to;
    this.headSize = HEAD + to;
    this.slotSize = this.statSlotSize(to);
    this.heads = new Float64Array(this.slotOf.length * this.headSize);
    for (let leaf = 0; leaf < this.leafCount; leaf++) {
      this.heads.set(
        oldHeads.subarray(leaf * oldHeadSize, leaf * oldHeadSize + HEAD + from),
        leaf * this.headSize,
      );
    }
    this.stats = new Float64Array(this.slotCapacity * this.slotSize);
    for (let leaf = 0; leaf < this.leafCount; leaf++) {
      const slot = this.slotOf[leaf]!;
      if (slot < 0) continue;
      let src = slot * oldSlotSize;
      let dst = slot * this.slotSize;
      for (let j = 0; j < this.perLeaf; j++) {
        const f = this.subsets === null ? j : this.subsets[leaf * this.perLeaf + j]!;
        if (this.nominal[f] === 1) {
          const v = this.cardinality[f]!;
          for (let r = 0; r <= v; r++) {
            this.stats.set(oldStats.subarray(src + r * from, src + (r + 1) * from), dst + r * to);
          }
          src += (v + 1) * from;
          dst += (v + 1) * to;
        } else {
          this.stats.set(oldStats.subarray(src, src + GAUSS * from), dst);
          src += GAUSS * from;
          dst += GAUSS * to;
        }
      }
    }
    this.logp = new Float64Array(to);
    this.sq = new Float64Array(to);
    this.prod = new Float64Array(to);
    this.probe = new Float64Array(to);
    this.pair = new Float64Array(2 * to);
    this.scale = new Float64Array(to);
  }
}
