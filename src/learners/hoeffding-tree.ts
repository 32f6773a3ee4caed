import {
  checkSchema,
  checkSnapshot,
  defaultsOf,
  type FeatureSchema,
  type OptionsOf,
  type OptionTable,
  optionConflict,
  resolveOptions,
  type Seed,
} from '../core/index.js';
import { splitLeaf } from './hoeffding-tree-grow.js';
import {
  majorityClass,
  majorityInto,
  NaiveBayesScratch,
  naiveBayesInto,
  observe,
} from './hoeffding-tree-leaf-model.js';
import {
  H_MC_CORRECT,
  H_NB_CORRECT,
  H_OBSERVED,
  H_SPLIT_CLOCK,
  HEAD,
  type LeavesState,
  TreeLeaves,
} from './hoeffding-tree-leaves.js';
import { type ForestArena, NODE_BYTES, type NodesState, TreeNodes } from './hoeffding-tree-nodes.js';
import { SplitSearch } from './hoeffding-tree-split.js';
import {
  type Classifier,
  checkLabel,
  checkOut,
  checkRow,
  checkWeight,
  type LearnerSnapshot,
} from './learner.js';

/**
 * Hoeffding tree classifier — Domingos & Hulten, "Mining high-speed data streams", KDD 2000 (VFDT).
 *
 * A leaf collects sufficient statistics; every `checkInterval` units of weight it ranks candidate splits
 * (see `hoeffding-tree-split.ts`) and splits on the best attribute when the Hoeffding bound says it is
 * the best. The paper's tie rule ε < τ was stated for two classes (R = 1); Shoal reads τ as a share of
 * the range, so that the rule asks for the same n at any number of classes — with ε < τ a 26-class tree
 * needed 22 times the rows (R² ≈ 22) before its first split. A split's children start from the
 * parent's class counts and statistics (`hoeffding-tree-grow.ts`). Leaves predict by the majority
 * class, by naive Bayes over their statistics, or adaptively by whichever of the two has been right more
 * often at that leaf (Holmes, Kirkby & Pfahringer, "Stress-testing Hoeffding trees", PKDD 2005; see
 * `hoeffding-tree-leaf-model.ts`). A memory cap deactivates the least promising leaves (weight × error
 * of the majority class, as in VFDT §3): they keep their class counts and predict the majority class,
 * but stop collecting statistics. Missing values (NaN) are skipped in statistics and follow the branch
 * that took the most weight when its split was made.
 *
 * Layout, for speed: nodes live in an arena of 16-byte records (`hoeffding-tree-nodes.ts`), leaves in
 * heads and a pool of statistics slots (`hoeffding-tree-leaves.ts`).
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
  /**
   * 128 KiB holds about the leaves 256 KiB held when leaf statistics were doubles (version 6 and
   * before): slots are single precision now and take half the bytes, heads and nodes do not. Kept at
   * 256 KiB, the same bytes would hold twice the leaves: deeper trees, as big a model for the caches,
   * and bagging ×10 0.89× as fast for no accuracy (0.8957 against 0.8956 on the bench stream).
   */
  byteLimit: {
    type: 'number',
    above: 0,
    default: 128 * 1024,
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
/**
 * Version 7 keeps leaf statistics in single precision (a slot's values as 4-byte floats); version 6 keeps the weight trained since the memory cap was last checked (version 5 dropped it, so a
 * restored tree checked its cap at other rows than the original); version 5 made nodes 16-byte records
 * with a missing-value branch and no weight (version 4 counted one).
 */
const VERSION = 7;

const PREDICT_MAJORITY = 0;
const PREDICT_NB = 1;
const PREDICT_ADAPTIVE = 2;
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

interface TreeState extends NodesState, LeavesState {
  readonly classes: number;
  readonly sinceMemoryCheck: number;
}

export class HoeffdingTree implements Classifier {
  readonly kind = KIND;
  readonly schema: FeatureSchema;
  readonly options: HoeffdingTreeOptions;
  private readonly width: number;
  private readonly mode: number;
  private readonly nodes = new TreeNodes();
  private readonly leaves: TreeLeaves;
  private readonly search: SplitSearch;
  private readonly naiveBayes = new NaiveBayesScratch();
  /** Per-class scratch: a prediction nobody reads, and the shares a split's children inherit. */
  private probe = new Float64Array(1);
  private sinceMemoryCheck = 0;
  /** Splits made so far: a forest that copied the nodes compares it to know when to copy them again. */
  private splits = 0;

  constructor(schema: FeatureSchema, options: Partial<HoeffdingTreeOptions> = {}, seed: Seed = 0) {
    this.schema = checkSchema(KIND, schema);
    this.width = schema.features.length;
    this.options = validate(options, this.width);
    const nominal = Uint8Array.from(schema.features, (f) => (f.kind === 'nominal' ? 1 : 0));
    const cardinality = Int32Array.from(schema.features, (f) => (f.kind === 'nominal' ? f.values : 0));
    this.mode =
      this.options.leafModel === 'majority'
        ? PREDICT_MAJORITY
        : this.options.leafModel === 'naive-bayes'
          ? PREDICT_NB
          : PREDICT_ADAPTIVE;
    this.leaves = new TreeLeaves(nominal, cardinality, this.options.featureSubset, seed);
    this.search = new SplitSearch(this.options);
    this.search.fit(1);
    this.nodes.addLeaf(0, this.leaves.add(null, -1));
  }

  get classes(): number {
    return this.leaves.c;
  }

  /** Number of nodes, leaves and active leaves, and the depth reached. */
  get shape(): { nodes: number; leaves: number; activeLeaves: number; depth: number } {
    const leaves = this.leaves;
    return {
      nodes: this.nodes.count,
      leaves: leaves.count,
      activeLeaves: leaves.activeSlots,
      depth: this.nodes.maxDepth(),
    };
  }

  ensureClasses(n: number): void {
    if (n <= this.leaves.c) return;
    checkLabel(KIND, n - 1);
    this.leaves.relayout(n);
    this.search.fit(n);
    this.naiveBayes.fit(n);
    this.probe = new Float64Array(n);
  }

  score(row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    checkRow(KIND, row, offset, this.width);
    checkOut(KIND, out, outOffset, this.leaves.c);
    const node = this.nodes.route(row, offset, this.leaves.cardinalities);
    return this.predictAt(this.nodes.leafOf[node]!, row, offset, out, outOffset);
  }

  train(row: Float64Array, offset: number, label: number, weight: number): void {
    checkRow(KIND, row, offset, this.width);
    checkLabel(KIND, label);
    checkWeight(KIND, weight);
    if (weight === 0) return;
    if (label >= this.leaves.c) this.ensureClasses(label + 1);
    const node = this.nodes.route(row, offset, this.leaves.cardinalities);
    const leaf = this.nodes.leafOf[node]!;
    // The adaptive leaf keeps score of both of its models, so it answers the row before it learns it.
    if (this.mode === PREDICT_ADAPTIVE && this.leaves.slotOf[leaf]! >= 0)
      this.scoreTrainAt(node, leaf, row, offset, label, weight, this.probe, 0);
    else this.learnAt(node, leaf, row, offset, label, weight, -1, -1);
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
    checkOut(KIND, out, outOffset, this.leaves.c);
    const node = this.nodes.route(row, offset, this.leaves.cardinalities);
    return this.scoreTrainAt(node, this.nodes.leafOf[node]!, row, offset, label, weight, out, outOffset);
  }

  /**
   * `scoreTrain` for a row a forest walk has already routed to leaf node `node` of leaf `leaf`, unchecked:
   * the caller checked the row and the label, and `weight` and `out` are its own.
   */
  scoreTrainAt(
    node: number,
    leaf: number,
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
    out: Float64Array,
    outOffset: number,
  ): number {
    const leaves = this.leaves;
    if (!(weight > 0)) return this.predictAt(leaf, row, offset, out, outOffset);
    // The prediction, and the answers of both leaf models that the adaptive leaf's score needs.
    const head = leaf * leaves.headSize;
    const slot = leaves.slotOf[leaf]!;
    const mode = this.mode;
    let predicted: number;
    let majority = -1;
    let nb = -1;
    if (mode === PREDICT_MAJORITY || slot < 0) {
      majority = majorityInto(leaves, head, out, outOffset);
      predicted = majority;
    } else if (
      mode === PREDICT_NB ||
      leaves.heads[head + H_NB_CORRECT]! > leaves.heads[head + H_MC_CORRECT]!
    ) {
      nb = naiveBayesInto(leaves, this.naiveBayes, leaf, head, slot, row, offset, out, outOffset);
      if (mode === PREDICT_ADAPTIVE) majority = majorityClass(leaves, head);
      predicted = nb;
    } else {
      majority = majorityInto(leaves, head, out, outOffset);
      nb = naiveBayesInto(leaves, this.naiveBayes, leaf, head, slot, row, offset, this.probe, 0);
      predicted = majority;
    }
    if (label >= leaves.c) this.ensureClasses(label + 1);
    this.learnAt(node, leaf, row, offset, label, weight, majority, nb);
    return predicted;
  }

  sizeBytes(): number {
    return this.nodes.count * NODE_BYTES + this.leaves.sizeBytes();
  }

  /** Splits made so far (the nodes change only by splits). */
  get structure(): number {
    return this.splits;
  }

  /** Nodes: the room a forest walk needs to hold this tree. */
  get nodeCount(): number {
    return this.nodes.count;
  }

  /** Copy the nodes into a forest arena at node `base` (see `TreeNodes.copyInto`); false if they cannot walk there. */
  copyNodesInto(arena: ForestArena, base: number): boolean {
    return this.nodes.copyInto(arena, base, this.leaves.cardinalities);
  }

  /**
   * `score` for a row a forest walk has already routed to leaf `leaf` (a leaf index, not a node),
   * unchecked: the forest's caller checked the row, and `out` has room for every member's classes.
   */
  scoreLeaf(leaf: number, row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    return this.predictAt(leaf, row, offset, out, outOffset);
  }

  snapshot(): LearnerSnapshot {
    const state: TreeState = {
      classes: this.leaves.c,
      sinceMemoryCheck: this.sinceMemoryCheck,
      ...this.nodes.snapshot(),
      ...this.leaves.snapshot(),
    };
    return { kind: KIND, version: VERSION, schema: this.schema, options: { ...this.options }, state };
  }

  static restore(snapshot: LearnerSnapshot): HoeffdingTree {
    checkSnapshot(snapshot, KIND, VERSION);
    const s = snapshot.state as TreeState;
    const tree = new HoeffdingTree(snapshot.schema, snapshot.options as Partial<HoeffdingTreeOptions>);
    tree.ensureClasses(s.classes);
    tree.nodes.restore(s, KIND);
    tree.leaves.restore(s, KIND);
    tree.sinceMemoryCheck = s.sinceMemoryCheck;
    return tree;
  }

  /** Predict at a leaf into `out`; returns the class predicted. */
  private predictAt(
    leaf: number,
    row: Float64Array,
    offset: number,
    out: Float64Array,
    outOffset: number,
  ): number {
    const leaves = this.leaves;
    const head = leaf * leaves.headSize;
    const slot = leaves.slotOf[leaf]!;
    const heads = leaves.heads;
    if (
      this.mode === PREDICT_MAJORITY ||
      slot < 0 ||
      (this.mode === PREDICT_ADAPTIVE && !(heads[head + H_NB_CORRECT]! > heads[head + H_MC_CORRECT]!))
    )
      return majorityInto(leaves, head, out, outOffset);
    return naiveBayesInto(leaves, this.naiveBayes, leaf, head, slot, row, offset, out, outOffset);
  }

  /**
   * Update leaf `leaf` at node `node` with a labelled row. `majority` and `nb` are the answers the leaf's
   * two models gave the row before it learnt it, which the adaptive leaf's score needs (−1 otherwise).
   */
  private learnAt(
    node: number,
    leaf: number,
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
    majority: number,
    nb: number,
  ): void {
    const leaves = this.leaves;
    const head = leaf * leaves.headSize;
    const heads = leaves.heads;
    const slot = leaves.slotOf[leaf]!;
    if (this.mode === PREDICT_ADAPTIVE && slot >= 0) {
      if (majority === label) heads[head + H_MC_CORRECT]! += weight;
      if (nb === label) heads[head + H_NB_CORRECT]! += weight;
    }
    heads[head + HEAD + label]! += weight;
    if (slot < 0) return;
    observe(leaves, leaf, slot, row, offset, label, weight);
    heads[head + H_OBSERVED]! += weight;
    const observed = heads[head + H_OBSERVED]!;
    const o = this.options;
    if (observed - heads[head + H_SPLIT_CLOCK]! >= o.checkInterval) {
      heads[head + H_SPLIT_CLOCK] = observed;
      if (this.nodes.depth[node]! < o.depthLimit) {
        const f = this.search.choose(leaves, leaf);
        if (f >= 0) {
          splitLeaf(this.nodes, leaves, node, leaf, f, this.search.threshold, o.checkInterval, this.probe);
          this.splits++;
        } else {
          // Skip the attempts of the check-interval grid that come before the bound could settle the
          // ranking (see `SplitSearch.ready`): each would fail unless the merits moved apart meanwhile.
          const skipped = Math.ceil((this.search.ready - observed) / o.checkInterval) - 1;
          if (skipped > 0) heads[head + H_SPLIT_CLOCK] = observed + skipped * o.checkInterval;
        }
      }
    }
    this.sinceMemoryCheck += weight;
    if (this.sinceMemoryCheck >= MEMORY_CHECK_GRACE_PERIODS * o.checkInterval) {
      this.sinceMemoryCheck = 0;
      const cap = this.byteCap();
      if (this.sizeBytes() > cap) leaves.enforceCap(cap, this.nodes.count * NODE_BYTES);
    }
  }

  /**
   * The cap in force: `byteLimit` for up to two classes, scaled by C/2 beyond. A leaf's statistics
   * grow with the class count, so a fixed cap would hold 13 times fewer leaves on 26 classes than on
   * two (a 26-class, 16-feature tree stopped at 12 active leaves under 256 KiB of double slots, and its member lost a
   * point of accuracy and was retired as the inactive leaves fell behind); scaled, the number of leaves
   * the cap allows depends on the features only. Two-class streams, where speed matters most, keep the
   * cap they had.
   */
  private byteCap(): number {
    return this.options.byteLimit * Math.max(1, this.leaves.c / 2);
  }
}
