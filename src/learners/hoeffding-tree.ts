import {
  checkSchema,
  checkSnapshot,
  decodeF64,
  decodeI32,
  defaultsOf,
  encodeF64,
  encodeI32,
  erfc,
  type FeatureSchema,
  hoeffdingBound,
  normalCdf,
  type OptionsOf,
  type OptionTable,
  optionConflict,
  Rng,
  type RngState,
  resolveOptions,
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
import { impurity, splitMerit } from './split-merit.js';

/**
 * Hoeffding tree classifier — Domingos & Hulten, "Mining high-speed data streams", KDD 2000 (VFDT).
 *
 * A leaf collects sufficient statistics; every `checkInterval` units of weight it ranks candidate splits
 * by merit G (information gain, or Gini reduction) and splits on the best attribute when
 *   G(best) − G(second best) > ε  or  ε < τR,   with ε = √(R² ln(1/δ) / 2n)   (the Hoeffding bound, eq. 1),
 * R = log₂(classes) for information gain and 1 for Gini. The paper's tie rule ε < τ was stated for two
 * classes (R = 1); Shoal reads τ as a share of the range, so that the rule asks for the same n at any
 * number of classes — with ε < τ a 26-class tree needed 22 times the rows (R² ≈ 22) before its first
 * split. n is the weight the leaf observed itself; a split's children start from the parent's class
 * counts and statistics (see `inherit`). Numeric attributes keep one Gaussian per class
 * and test `candidateThresholds` evenly spaced thresholds between the observed minimum and maximum
 * (Pfahringer, Holmes & Kirkby, "Handling numeric attributes in Hoeffding trees", PAKDD 2008).
 * Nominal attributes keep class counts per category and split multiway. Leaves predict by the majority
 * class, by naive Bayes over their statistics, or adaptively by whichever of the two has been right more
 * often at that leaf (Holmes, Kirkby & Pfahringer, "Stress-testing Hoeffding trees", PKDD 2005).
 * A memory cap deactivates the least promising leaves (weight × error of the majority class, as in
 * VFDT §3): they keep their class counts and predict the majority class, but stop collecting statistics.
 * Missing values (NaN) are skipped in statistics and follow the branch that most weight has taken.
 *
 * Layout, for speed: nodes are 32-byte records (one cache line holds what a step of a walk reads).
 * Every leaf has a row of `heads`
 *   [last attempt, majority right, naive Bayes right, weight observed | class counts (C)],
 * and every active leaf one slot of the `stats` pool with its attribute statistics. A slot's numeric
 * region holds, first, each numeric attribute's per-class [mean, 1/variance] side by side (all that
 * naive Bayes reads, so a prediction touches a third of the slot), then, class by class, each numeric
 * attribute's [weight, M2, min, max] (West's weighted Welford, with the mean in front); nominal
 * statistics follow as counts[category][class] and per-class totals. Deactivating a leaf frees its slot.
 *
 * @example
 * const tree = new HoeffdingTree(schema, { leafModel: 'adaptive' }, 7);
 * const predicted = tree.scoreTrain(rows, i * width, label, 1, probabilities, 0);
 */

/** The Hoeffding tree's options (see `OptionTable`). */
export const HOEFFDING_TREE_OPTIONS = {
  checkInterval: {
    type: 'integer',
    atLeast: 1,
    default: 200,
    doc: 'n_min, the weight a leaf sees between split attempts (Domingos & Hulten: 200)',
  },
  hoeffdingDelta: {
    type: 'number',
    above: 0,
    below: 1,
    default: 1e-7,
    doc: 'δ, the confidence of the Hoeffding bound (Domingos & Hulten: 1e-7)',
  },
  tieBreak: {
    type: 'number',
    atLeast: 0,
    default: 0.05,
    doc: "τ, in units of the merit's range R: split anyway when ε < τR (Domingos & Hulten: 0.05, R = 1)",
  },
  merit: { type: 'choice', choices: ['info-gain', 'gini'], default: 'info-gain', doc: 'the split criterion' },
  leafModel: {
    type: 'choice',
    choices: ['majority', 'naive-bayes', 'adaptive'],
    default: 'adaptive',
    doc: 'what a leaf predicts with (adaptive: whichever of the two has been right more often)',
  },
  candidateThresholds: {
    type: 'integer',
    atLeast: 1,
    default: 10,
    doc: 'candidate thresholds per numeric attribute (Pfahringer et al. 2008 use 10)',
  },
  featureSubset: {
    type: 'integer',
    atLeast: 0,
    default: 0,
    doc: 'attributes a leaf considers, drawn per leaf; 0 = all, at most the schema width',
  },
  depthLimit: {
    type: 'integer',
    atLeast: 0,
    default: 30,
    doc: 'leaves at this depth stop splitting (root: 0)',
  },
  byteLimit: {
    type: 'number',
    above: 0,
    default: 256 * 1024,
    doc: 'memory cap in bytes for a two-class tree, scaled by C/2 for C > 2 classes; the least promising leaves are deactivated above it',
  },
  branchShareFloor: {
    type: 'number',
    atLeast: 0,
    below: 0.5,
    default: 0.01,
    doc: 'smallest share of weight each of two branches must get for a split to count (common practice)',
  },
} as const satisfies OptionTable;

export type HoeffdingTreeOptions = OptionsOf<typeof HOEFFDING_TREE_OPTIONS>;

export type LeafModel = HoeffdingTreeOptions['leafModel'];

export const HOEFFDING_TREE_DEFAULTS: HoeffdingTreeOptions = defaultsOf(HOEFFDING_TREE_OPTIONS);

const KIND = 'hoeffding-tree';
const VERSION = 4;

// Leaf head.
const H_LAST_ATTEMPT = 0;
const H_MC_CORRECT = 1;
const H_NB_CORRECT = 2;
/**
 * Weight the leaf's own statistics have observed: the n of the Hoeffding bound and the clock of split
 * attempts. Not the class counts, which a split seeds from the parent.
 */
const H_OBSERVED = 3;
const HEAD = 4;
// Numeric statistics of one attribute and class, in two regions of a slot (see the class comment):
// what naive Bayes reads, feature-major, ...
const P_MEAN = 0;
const P_INV_VAR = 1;
const PRED = 2;
// ... and what only training and split attempts read, class-major.
const T_W = 0;
const T_M2 = 1;
const T_MIN = 2;
const T_MAX = 3;
const TRAIN = 4;
/** Variance floor for naive-Bayes densities of a class seen with a single value. */
const MIN_VARIANCE = 1e-9;
// A node is a 32-byte record, so that a step of a walk reads one cache line: threshold and weight
// (float64 indices 4n, 4n + 1), feature (−1 for a leaf), first child, child count and leaf (int32
// indices 8n + 4 …). Depth, read only by split attempts, is a column of its own.
const N_THRESHOLD = 0;
const N_WEIGHT = 1;
const N_FEATURE = 4;
const N_FIRST = 5;
const N_COUNT = 6;
const N_LEAF = 7;
const NODE_BYTES = 32 + 4;
const PREDICT_MAJORITY = 0;
const PREDICT_NB = 1;
const PREDICT_ADAPTIVE = 2;
/** The prior a split's children inherit, in check intervals of the parent's weight (see `inherit`). */
const PRIOR_SHARE = 0.25;
/** Weight trained between two checks of the memory cap, in check intervals. */
const MEMORY_CHECK_GRACE_PERIODS = 10;

function validate(options: Partial<HoeffdingTreeOptions>, width: number): HoeffdingTreeOptions {
  const o = resolveOptions(KIND, HOEFFDING_TREE_OPTIONS, options);
  if (o.featureSubset > width) {
    optionConflict(
      KIND,
      'featureSubset',
      `must be at most the ${width} features of the schema, got ${o.featureSubset}`,
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
  readonly heads: string;
  /** Attribute statistics of each leaf, or null for an inactive leaf. */
  readonly stats: readonly (string | null)[];
  readonly subsets: string | null;
  readonly rng: RngState;
}

/** What a split hands its children: a copy of the parent's slot and what is needed to read it. */
interface ParentStats {
  readonly stats: Float64Array;
  /** Where each feature sits in the parent's slot (see `layoutOf`). */
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
  private nodeF = new Float64Array(16 * 4);
  private nodeI = new Int32Array(this.nodeF.buffer);
  private depth = new Int32Array(16);

  // Leaves: heads for all, a stats slot for the active ones.
  private leafCount = 0;
  private headSize = HEAD + 1;
  private heads = new Float64Array(16 * (HEAD + 1));
  private slotOf = new Int32Array(16);
  /** Per-leaf feature lists (leaf × perLeaf), or null when every leaf considers every feature. */
  private subsets: Int32Array | null;
  private slotSize = 0;
  /** Room in a slot for this many numeric attributes. */
  private readonly numericCap: number;
  /** Doubles of a slot that naive Bayes reads (means and inverse variances), and of its numeric region. */
  private predSize = 0;
  private numericSize = 0;
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
  private means = new Float64Array(1);
  private readonly all: Int32Array;
  private lastMajority = -1;
  private lastNb = -1;

  constructor(schema: FeatureSchema, options: Partial<HoeffdingTreeOptions> = {}, seed: Seed = 0) {
    this.schema = checkSchema(KIND, schema);
    this.width = schema.features.length;
    this.options = validate(options, this.width);
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
    this.numericCap = Math.min(this.perLeaf, this.nominal.length - this.nominal.reduce((a, b) => a + b, 0));
    this.layOut(1);
    this.addLeafNode(0, null, -1);
  }

  get classes(): number {
    return this.c;
  }

  /** Number of nodes, leaves and active leaves, and the depth reached. */
  get shape(): { nodes: number; leaves: number; activeLeaves: number; depth: number } {
    let depth = 0;
    for (let n = 0; n < this.nodeCount; n++)
      if (this.nodeI[8 * n + N_FEATURE]! < 0) depth = Math.max(depth, this.depth[n]!);
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
    const leaf = this.nodeI[8 * this.route(row, offset, 0) + N_LEAF]!;
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
    const predicted = this.predictAt(this.nodeI[8 * node + N_LEAF]!, row, offset, out, outOffset, weight > 0);
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
      feature: encodeI32(this.nodeColumnI32(N_FEATURE)),
      threshold: encodeF64(this.nodeColumnF64(N_THRESHOLD)),
      firstChild: encodeI32(this.nodeColumnI32(N_FIRST)),
      childCount: encodeI32(this.nodeColumnI32(N_COUNT)),
      leafOf: encodeI32(this.nodeColumnI32(N_LEAF)),
      depth: encodeI32(this.depth.subarray(0, n)),
      weight: encodeF64(this.nodeColumnF64(N_WEIGHT)),
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
    const i32 = (text: string, what: string) => decodeI32(text, `${KIND} ${what}`);
    const f64 = (text: string, what: string) => decodeF64(text, `${KIND} ${what}`);
    tree.nodeCount = 0;
    tree.allocateNodes(Math.max(16, s.nodes));
    tree.nodeCount = s.nodes;
    tree.setNodeColumnI32(N_FEATURE, i32(s.feature, 'feature'));
    tree.setNodeColumnF64(N_THRESHOLD, f64(s.threshold, 'threshold'));
    tree.setNodeColumnI32(N_FIRST, i32(s.firstChild, 'firstChild'));
    tree.setNodeColumnI32(N_COUNT, i32(s.childCount, 'childCount'));
    tree.setNodeColumnI32(N_LEAF, i32(s.leafOf, 'leafOf'));
    tree.setNodeColumnF64(N_WEIGHT, f64(s.weight, 'weight'));
    tree.depth.set(i32(s.depth, 'depth').subarray(0, s.nodes));
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

  /**
   * Walk from the root to a leaf; when `credit` > 0, add it to the weight of every node entered.
   * A numeric step is branch-free but for missing values: the comparison's 0 or 1 picks the child.
   */
  private route(row: Float64Array, offset: number, credit: number): number {
    const nodeF = this.nodeF;
    const nodeI = this.nodeI;
    let n = 0;
    let f = nodeI[N_FEATURE]!;
    while (f >= 0) {
      const x = row[offset + f]!;
      const first = nodeI[8 * n + N_FIRST]!;
      if (this.nominal[f] === 0) {
        n = !Number.isNaN(x) ? first + Number(x > nodeF[4 * n + N_THRESHOLD]!) : this.heaviestChild(n);
      } else {
        n = x >= 0 && x < nodeI[8 * n + N_COUNT]! && (x | 0) === x ? first + x : this.heaviestChild(n);
      }
      if (credit > 0) nodeF[4 * n + N_WEIGHT]! += credit;
      f = nodeI[8 * n + N_FEATURE]!;
    }
    return n;
  }

  /** The child of `n` that most weight has entered (the first on ties): where missing values go. */
  private heaviestChild(n: number): number {
    const first = this.nodeI[8 * n + N_FIRST]!;
    const count = this.nodeI[8 * n + N_COUNT]!;
    let best = first;
    for (let child = first + 1; child < first + count; child++) {
      if (this.nodeF[4 * child + N_WEIGHT]! > this.nodeF[4 * best + N_WEIGHT]!) best = child;
    }
    return best;
  }

  /** One column of the node records, for snapshots. */
  private nodeColumnI32(field: number): Int32Array {
    return Int32Array.from({ length: this.nodeCount }, (_, n) => this.nodeI[8 * n + field]!);
  }

  private nodeColumnF64(field: number): Float64Array {
    return Float64Array.from({ length: this.nodeCount }, (_, n) => this.nodeF[4 * n + field]!);
  }

  private setNodeColumnI32(field: number, values: Int32Array): void {
    this.checkColumn(values.length);
    for (let n = 0; n < this.nodeCount; n++) this.nodeI[8 * n + field] = values[n]!;
  }

  private setNodeColumnF64(field: number, values: Float64Array): void {
    this.checkColumn(values.length);
    for (let n = 0; n < this.nodeCount; n++) this.nodeF[4 * n + field] = values[n]!;
  }

  private checkColumn(length: number): void {
    if (length !== this.nodeCount) {
      throw new ShoalError(
        'invalid-snapshot',
        `${KIND}: a node column has ${length} entries, the snapshot says ${this.nodeCount} nodes`,
      );
    }
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
    let pred = slot * this.slotSize;
    let nom = pred + this.numericSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      const x = row[offset + f]!;
      if (this.nominal[f] === 0) {
        if (!Number.isNaN(x)) {
          for (let k = 0, g = pred; k < c; k++, g += PRED) {
            const iv = stats[g + P_INV_VAR]!;
            if (iv > 0) {
              const d = x - stats[g + P_MEAN]!;
              sq[k]! += d * d * iv;
              prod[k]! *= iv;
            }
          }
        }
        pred += PRED * c;
      } else {
        const v = this.cardinality[f]!;
        if (x >= 0 && x < v && (x | 0) === x) {
          const cell = nom + x * c;
          const totals = nom + v * c;
          for (let k = 0; k < c; k++) {
            const p = (stats[cell + k]! + 1) / (stats[totals + k]! + v);
            prod[k]! *= p * p;
          }
        }
        nom += (v + 1) * c;
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
    let pred = slot * this.slotSize;
    let nom = pred + this.numericSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      const x = row[offset + f]!;
      if (this.nominal[f] === 0) {
        if (!Number.isNaN(x)) {
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
        pred += 2 * PRED;
      } else {
        const v = this.cardinality[f]!;
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
    let pred = slot * this.slotSize + k * PRED;
    let nom = slot * this.slotSize + this.numericSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      const x = row[offset + f]!;
      if (this.nominal[f] === 0) {
        const iv = stats[pred + P_INV_VAR]!;
        if (!Number.isNaN(x) && iv > 0) {
          const d = x - stats[pred + P_MEAN]!;
          lp += 0.5 * Math.log(iv) - 0.5 * d * d * iv;
        }
        pred += PRED * c;
      } else {
        const v = this.cardinality[f]!;
        if (x >= 0 && x < v && (x | 0) === x)
          lp += Math.log((stats[nom + x * c + k]! + 1) / (stats[nom + v * c + k]! + v));
        nom += (v + 1) * c;
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
    const leaf = this.nodeI[8 * node + N_LEAF]!;
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
    if (slot < 0) return;
    this.observe(leaf, slot, row, offset, label, weight);
    heads[head + H_OBSERVED]! += weight;
    const observed = heads[head + H_OBSERVED]!;
    if (observed - heads[head + H_LAST_ATTEMPT]! >= this.options.checkInterval) {
      heads[head + H_LAST_ATTEMPT] = observed;
      if (this.depth[node]! < this.options.depthLimit) this.attemptSplit(node, leaf);
    }
    this.sinceMemoryCheck += weight;
    if (this.sinceMemoryCheck >= MEMORY_CHECK_GRACE_PERIODS * this.options.checkInterval) {
      this.sinceMemoryCheck = 0;
      if (this.sizeBytes() > this.byteCap()) this.enforceMemoryCap();
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
    const base = slot * this.slotSize;
    let pred = base + label * PRED;
    let train = base + this.predSize + label * this.numericCap * TRAIN;
    let nom = base + this.numericSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      const x = row[offset + f]!;
      if (this.nominal[f] === 0) {
        if (!Number.isNaN(x)) {
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
        pred += PRED * c;
        train += TRAIN;
      } else {
        const v = this.cardinality[f]!;
        if (x >= 0 && x < v && (x | 0) === x) {
          stats[nom + x * c + label]! += weight;
          stats[nom + v * c + label]! += weight;
        }
        nom += (v + 1) * c;
      }
    }
  }

  /** Rank candidate splits at a leaf and split when the Hoeffding bound says the best is best. */
  private attemptSplit(node: number, leaf: number): void {
    const c = this.c;
    const heads = this.heads;
    const head = leaf * this.headSize;
    let seenClasses = 0;
    for (let k = 0; k < c; k++) if (heads[head + HEAD + k]! > 0) seenClasses++;
    if (seenClasses < 2) return;
    const o = this.options;
    const range = o.merit === 'gini' ? 1 : Math.log2(c);
    // n is the weight this leaf has observed itself, not its class counts: a split seeds those with the
    // parent's, and a bound over the parent's n let each child split again after one check interval of
    // its own rows (the cascade of splits that collapsed members at λ = 6). The tie rule is in units of
    // the merit's range R, so that it means the same for any number of classes: ε < τR, that is
    // n > ln(1/δ)/(2τ²) (Domingos & Hulten 2000, eq. 1, with τ stated for R = 1).
    const epsilon = hoeffdingBound(range, o.hoeffdingDelta, heads[head + H_OBSERVED]!);
    const stats = this.stats;
    const subset = this.subsets;
    const per = this.perLeaf;
    let bestMerit = 0;
    let bestFeature = -1;
    let bestThreshold = 0;
    let second = 0;
    const base = this.slotOf[leaf]! * this.slotSize;
    let numeric = 0;
    let nom = base + this.numericSize;
    for (let j = 0; j < per; j++) {
      const f = subset === null ? j : subset[leaf * per + j]!;
      let merit: number;
      if (this.nominal[f] === 0) {
        merit = this.bestThreshold(base, numeric++);
      } else {
        const v = this.cardinality[f]!;
        const parent = impurity(o.merit, stats, nom + v * c, c);
        merit = splitMerit(o.merit, stats, nom, v, c, o.branchShareFloor, parent);
        this.cut = 0;
        nom += (v + 1) * c;
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
    if (bestFeature >= 0 && (bestMerit - second > epsilon || epsilon < o.tieBreak * range)) {
      this.split(node, leaf, bestFeature, bestThreshold);
    }
  }

  /** The threshold of the last `bestThreshold` call. */
  private cut = 0;

  /** Where class `k`'s mean and 1/variance of the `numeric`-th numeric attribute of the slot at `base` are. */
  private predAt(base: number, numeric: number, k: number): number {
    return base + (numeric * this.c + k) * PRED;
  }

  /** Where class `k`'s weight, M2, minimum and maximum of that attribute are. */
  private trainAt(base: number, numeric: number, k: number): number {
    return base + this.predSize + (k * this.numericCap + numeric) * TRAIN;
  }

  /**
   * Best merit over `candidateThresholds` evenly spaced thresholds for the Gaussian statistics of the
   * `numeric`-th numeric attribute of the slot at `base`; leaves the threshold in `this.cut`.
   */
  private bestThreshold(base: number, numeric: number): number {
    const c = this.c;
    const stats = this.stats;
    const pair = this.pair;
    const scale = this.scale;
    const mean = this.means;
    const o = this.options;
    let lo = Number.POSITIVE_INFINITY;
    let hi = Number.NEGATIVE_INFINITY;
    for (let k = 0; k < c; k++) {
      const t = this.trainAt(base, numeric, k);
      const w = stats[t + T_W]!;
      pair[c + k] = w;
      mean[k] = stats[this.predAt(base, numeric, k) + P_MEAN]!;
      if (w > 0) {
        if (stats[t + T_MIN]! < lo) lo = stats[t + T_MIN]!;
        if (stats[t + T_MAX]! > hi) hi = stats[t + T_MAX]!;
        // 1 / (σ√2), so that Φ((t − μ)/σ) = erfc((μ − t) · scale) / 2; 0 marks a class without spread.
        const variance = stats[t + T_M2]! / w;
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
      const cut = lo + step * i;
      for (let k = 0; k < c; k++) {
        const t = this.trainAt(base, numeric, k);
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
      if (m > merit) {
        merit = m;
        this.cut = cut;
      }
    }
    return merit;
  }

  /** Estimated weight of class `k` at or below `cut`, from its Gaussian and its observed range. */
  private weightBelow(base: number, numeric: number, k: number, cut: number): number {
    const stats = this.stats;
    const t = this.trainAt(base, numeric, k);
    const w = stats[t + T_W]!;
    if (w <= 0 || cut < stats[t + T_MIN]!) return 0;
    if (cut >= stats[t + T_MAX]!) return w;
    const mean = stats[this.predAt(base, numeric, k) + P_MEAN]!;
    const variance = stats[t + T_M2]! / w;
    if (!(variance > 0)) return mean <= cut ? w : 0;
    return w * normalCdf(cut, mean, Math.sqrt(variance));
  }

  /**
   * Turn a leaf into an internal node with new leaves below it. Each child starts with the class counts
   * the split attribute sends its way and inherits the parent's per-class attribute statistics (see
   * `inherit`), so that its first predictions are the parent's naive Bayes with the child's priors
   * instead of a majority vote or a naive Bayes over a handful of rows.
   */
  private split(node: number, leaf: number, f: number, threshold: number): void {
    const c = this.c;
    const stats = this.stats;
    const heads = this.heads;
    const branches = this.nominal[f] === 1 ? this.cardinality[f]! : 2;
    const childDepth = this.depth[node]! + 1;
    const base = this.slotOf[leaf]! * this.slotSize;
    const where = this.layoutOf(leaf);
    const at = where[f]!;
    // The weight of each class in the split attribute, and the share of it each branch gets.
    const seeds = new Float64Array(branches * c);
    const classWeight = new Float64Array(c);
    for (let k = 0; k < c; k++) {
      if (this.nominal[f] === 1) {
        const nom = base + this.numericSize + at;
        for (let b = 0; b < branches; b++) seeds[b * c + k] = stats[nom + b * c + k]!;
        classWeight[k] = stats[nom + branches * c + k]!;
      } else {
        const w = stats[this.trainAt(base, at, k) + T_W]!;
        const below = this.weightBelow(base, at, k, threshold);
        seeds[k] = below;
        seeds[c + k] = Math.max(0, w - below);
        classWeight[k] = w;
      }
    }
    const parent = stats.slice(base, base + this.slotSize);
    const head = leaf * this.headSize;
    const from: ParentStats = {
      stats: parent,
      where,
      classWeight,
      observed: heads[head + H_OBSERVED]!,
      majorityRight: heads[head + H_MC_CORRECT]!,
      naiveBayesRight: heads[head + H_NB_CORRECT]!,
      splitFeature: f,
      threshold,
    };
    // The split node gives up its leaf: the first child takes over the leaf's index, with a fresh slot.
    this.releaseSlot(leaf);
    for (let b = 0; b < branches; b++) {
      const child = this.addLeafNode(childDepth, seeds.subarray(b * c, (b + 1) * c), b === 0 ? leaf : -1);
      if (b === 0) this.nodeI[8 * node + N_FIRST] = child;
      this.inherit(this.nodeI[8 * child + N_LEAF]!, from, seeds, b);
    }
    this.nodeF[4 * node + N_THRESHOLD] = threshold;
    this.nodeI[8 * node + N_FEATURE] = f;
    this.nodeI[8 * node + N_COUNT] = branches;
    this.nodeI[8 * node + N_LEAF] = -1;
  }

  /**
   * Where each feature's statistics sit in a leaf's slot: the numeric index for a numeric feature, the
   * offset within the nominal region for a nominal one, −1 for a feature the leaf does not consider.
   */
  private layoutOf(leaf: number): Int32Array {
    const where = new Int32Array(this.width).fill(-1);
    const subset = this.subsets;
    const per = this.perLeaf;
    let numeric = 0;
    let nom = 0;
    for (let j = 0; j < per; j++) {
      const g = subset === null ? j : subset[leaf * per + j]!;
      if (this.nominal[g] === 1) {
        where[g] = nom;
        nom += (this.cardinality[g]! + 1) * this.c;
      } else {
        where[g] = numeric++;
      }
    }
    return where;
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
   * twentieth), a weaker one let a 26-class tree fall back towards its fresh leaves' guesses. The adaptive leaf's scores are inherited in the same
   * proportion, so a parent that predicted by naive Bayes has children that do too.
   */
  private inherit(leaf: number, from: ParentStats, seeds: Float64Array, b: number): void {
    const c = this.c;
    const stats = this.stats;
    const parent = from.stats;
    let branchWeight = 0;
    let parentWeight = 0;
    for (let k = 0; k < c; k++) {
      branchWeight += seeds[b * c + k]!;
      parentWeight += from.classWeight[k]!;
    }
    if (!(branchWeight > 0 && parentWeight > 0 && from.observed > 0)) return;
    const prior = (PRIOR_SHARE * this.options.checkInterval * parentWeight) / from.observed;
    const scale = branchWeight > prior ? prior / branchWeight : 1;
    const share = this.probe;
    for (let k = 0; k < c; k++) {
      const w = from.classWeight[k]!;
      share[k] = w > 0 ? (seeds[b * c + k]! / w) * scale : 0;
    }
    const base = this.slotOf[leaf]! * this.slotSize;
    const subset = this.subsets;
    const per = this.perLeaf;
    let numeric = 0;
    let nom = base + this.numericSize;
    for (let j = 0; j < per; j++) {
      const g = subset === null ? j : subset[leaf * per + j]!;
      const at = from.where[g]!;
      if (this.nominal[g] === 1) {
        const v = this.cardinality[g]!;
        if (at >= 0) {
          const src = this.numericSize + at;
          for (let r = 0; r <= v; r++)
            for (let k = 0; k < c; k++) stats[nom + r * c + k] = parent[src + r * c + k]! * share[k]!;
        }
        nom += (v + 1) * c;
        continue;
      }
      if (at >= 0) {
        for (let k = 0; k < c; k++) {
          const w = parent[this.trainAt(0, at, k) + T_W]! * share[k]!;
          if (!(w > 0)) continue;
          const p = this.predAt(base, numeric, k);
          const t = this.trainAt(base, numeric, k);
          const pp = this.predAt(0, at, k);
          const pt = this.trainAt(0, at, k);
          stats[p + P_MEAN] = parent[pp + P_MEAN]!;
          stats[p + P_INV_VAR] = parent[pp + P_INV_VAR]!;
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
      numeric++;
    }
    const head = leaf * this.headSize;
    const inherited = (branchWeight * scale) / parentWeight;
    this.heads[head + H_MC_CORRECT] = from.majorityRight * inherited;
    this.heads[head + H_NB_CORRECT] = from.naiveBayesRight * inherited;
  }

  /** Append a leaf node (taking over leaf index `reuse` when ≥ 0); returns the node index. */
  private addLeafNode(depth: number, counts: Float64Array | null, reuse: number): number {
    if (this.nodeCount === this.depth.length) this.allocateNodes(this.nodeCount * 2);
    const n = this.nodeCount++;
    this.nodeF[4 * n + N_THRESHOLD] = 0;
    this.nodeI[8 * n + N_FEATURE] = -1;
    this.nodeI[8 * n + N_FIRST] = -1;
    this.nodeI[8 * n + N_COUNT] = 0;
    this.depth[n] = depth;
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
    this.nodeF[4 * n + N_WEIGHT] = w;
    if (this.subsets !== null) this.drawSubset(leaf);
    this.slotOf[leaf] = this.allocateSlot();
    this.nodeI[8 * n + N_LEAF] = leaf;
    return n;
  }

  private drawSubset(leaf: number): void {
    const order = Int32Array.from(this.all);
    this.rng.shuffle(order);
    const per = this.perLeaf;
    this.subsets!.set(order.subarray(0, per).sort(), leaf * per);
  }

  /**
   * Lay out a stats slot for `c` classes, with room for the largest attribute set a leaf may hold:
   * the numeric region (what naive Bayes reads, then what training reads) and the nominal counts.
   */
  private layOut(c: number): void {
    const nominalSizes = Array.from(this.all)
      .filter((f) => this.nominal[f] === 1)
      .map((f) => (this.cardinality[f]! + 1) * c)
      .sort((a, b) => b - a);
    this.predSize = this.numericCap * PRED * c;
    this.numericSize = this.numericCap * (PRED + TRAIN) * c;
    this.slotSize = this.numericSize + nominalSizes.slice(0, this.perLeaf).reduce((a, b) => a + b, 0);
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

  /** Room for `cap` nodes, keeping the first `nodeCount`. */
  private allocateNodes(cap: number): void {
    this.nodeF = grownF64(this.nodeF, cap * 4);
    this.nodeI = new Int32Array(this.nodeF.buffer);
    this.depth = grownI32(this.depth, cap);
  }

  private growLeaves(): void {
    const cap = Math.max(16, this.slotOf.length * 2);
    this.heads = grownF64(this.heads, cap * this.headSize);
    this.slotOf = grownI32(this.slotOf, cap);
    if (this.subsets !== null) this.subsets = grownI32(this.subsets, cap * this.perLeaf);
  }

  // ---- memory cap ----------------------------------------------------------------------------

  /**
   * The cap in force: `byteLimit` for up to two classes, scaled by C/2 beyond. A leaf's statistics
   * grow with the class count, so a fixed cap would hold 13 times fewer leaves on 26 classes than on
   * two (a 26-class, 16-feature tree stopped at 12 active leaves under 256 KiB, and its member lost a
   * point of accuracy and was retired as the inactive leaves fell behind); scaled, the number of leaves
   * the cap allows depends on the features only. Two-class streams, where speed matters most, keep the
   * cap they had.
   */
  private byteCap(): number {
    return this.options.byteLimit * Math.max(1, this.c / 2);
  }

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
   * promising inactive leaves while they fit (ties: the lower leaf index counts as less promising).
   * A cap is enforced after a split, which adds a leaf or a few, so each phase picks its leaves one by
   * one instead of sorting them all.
   */
  private enforceMemoryCap(): void {
    const cap = this.byteCap();
    const promise = Float64Array.from({ length: this.leafCount }, (_, l) => this.promise(l));
    while (this.sizeBytes() > cap) {
      const leaf = this.extremeLeaf(promise, true, -1);
      if (leaf < 0) break;
      this.releaseSlot(leaf);
    }
    const slotBytes = this.slotSize * 8;
    while (this.sizeBytes() + slotBytes <= cap) {
      const leaf = this.extremeLeaf(promise, false, 1);
      if (leaf < 0) break;
      const head = leaf * this.headSize;
      this.heads[head + H_MC_CORRECT] = 0;
      this.heads[head + H_NB_CORRECT] = 0;
      this.heads[head + H_LAST_ATTEMPT] = 0;
      this.heads[head + H_OBSERVED] = 0;
      this.slotOf[leaf] = this.allocateSlot();
    }
  }

  /**
   * The active (`active`) or inactive leaf that is least (`sign` −1) or most (+1) promising, ties going
   * to the lower index as the lesser; −1 when there is none.
   */
  private extremeLeaf(promise: Float64Array, active: boolean, sign: number): number {
    let best = -1;
    for (let leaf = 0; leaf < this.leafCount; leaf++) {
      if (this.slotOf[leaf]! >= 0 !== active) continue;
      if (best < 0) {
        best = leaf;
        continue;
      }
      const d = sign * (promise[leaf]! - promise[best]!);
      if (d > 0 || (d === 0 && sign > 0)) best = leaf;
    }
    return best;
  }

  /** Move every per-class statistic into a layout for `to` classes. */
  private relayout(to: number): void {
    const from = this.c;
    const oldHeadSize = this.headSize;
    const oldHeads = this.heads;
    const oldStats = this.stats;
    const oldSlotSize = this.slotSize;
    const oldPredSize = this.predSize;
    const oldNumericSize = this.numericSize;
    this.c = to;
    this.headSize = HEAD + to;
    this.layOut(to);
    this.heads = new Float64Array(this.slotOf.length * this.headSize);
    for (let leaf = 0; leaf < this.leafCount; leaf++) {
      this.heads.set(
        oldHeads.subarray(leaf * oldHeadSize, leaf * oldHeadSize + HEAD + from),
        leaf * this.headSize,
      );
    }
    const cap = this.numericCap;
    const stats = new Float64Array(this.slotCapacity * this.slotSize);
    for (let leaf = 0; leaf < this.leafCount; leaf++) {
      const slot = this.slotOf[leaf]!;
      if (slot < 0) continue;
      const src = slot * oldSlotSize;
      const dst = slot * this.slotSize;
      for (let i = 0; i < cap; i++) {
        for (let k = 0; k < from; k++) {
          const p = src + (i * from + k) * PRED;
          const t = src + oldPredSize + (k * cap + i) * TRAIN;
          stats.set(oldStats.subarray(p, p + PRED), this.predAt(dst, i, k));
          stats.set(oldStats.subarray(t, t + TRAIN), this.trainAt(dst, i, k));
        }
      }
      let nomFrom = src + oldNumericSize;
      let nomTo = dst + this.numericSize;
      for (let j = 0; j < this.perLeaf; j++) {
        const f = this.subsets === null ? j : this.subsets[leaf * this.perLeaf + j]!;
        if (this.nominal[f] === 0) continue;
        const v = this.cardinality[f]!;
        for (let r = 0; r <= v; r++) {
          stats.set(oldStats.subarray(nomFrom + r * from, nomFrom + (r + 1) * from), nomTo + r * to);
        }
        nomFrom += (v + 1) * from;
        nomTo += (v + 1) * to;
      }
    }
    this.stats = stats;
    this.logp = new Float64Array(to);
    this.sq = new Float64Array(to);
    this.prod = new Float64Array(to);
    this.probe = new Float64Array(to);
    this.pair = new Float64Array(2 * to);
    this.scale = new Float64Array(to);
    this.means = new Float64Array(to);
  }
}
