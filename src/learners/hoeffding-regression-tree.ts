import {
  checkSchema,
  checkSnapshot,
  decodeF64,
  decodeI32,
  defaultsOf,
  encodeF64,
  encodeI32,
  type FeatureSchema,
  hoeffdingBound,
  type OptionsOf,
  type OptionTable,
  resolveOptions,
  type Seed,
  ShoalError,
  welfordAdd,
} from '../core/index.js';
import { bestNominalSplit, SplitCandidate } from './hoeffding-regression-tree-split.js';
import { ValueStore, type ValueStoreState } from './hoeffding-regression-tree-values.js';
import { checkRow, checkTarget, checkWeight, type LearnerSnapshot, type Regressor } from './learner.js';
import {
  CLOCK,
  HEAD,
  type LeafModel,
  LINEAR_SGD_OPTIONS,
  LinearSgd,
  TARGET,
} from './linear-regression-sgd.js';
import { isPresent, nominalCode } from './missing.js';
import { doubledRoom } from './typed-arrays.js';

/**
 * `hoeffding-regression-tree`: an incremental regression tree after Ikonomovska, Gama & Džeroski,
 * "Learning model trees from evolving data streams", Data Mining and Knowledge Discovery 23, 2011
 * (the FIMT-DD tree without its drift-adaptation part, which Shoal's member lifecycle provides).
 *
 * - Split criterion: the reduction of the target's variance (the paper uses the standard-deviation
 *   reduction; both rank splits by how much they shrink the spread of the target). The best split of
 *   each feature is found per leaf; a numeric feature's merit is scaled by the share of rows in which
 *   it was present (Quinlan, C4.5: Programs for Machine Learning, 1993, on unknown values; from memory).
 * - Split decision: with A and B the best two features, r = merit(B)/merit(A) ∈ [0, 1] is a
 *   random variable of range 1, so by the Hoeffding bound ε = √(ln(1/δ) / 2n) (`core/numeric`) A is
 *   truly better than B with probability 1 − δ when r < 1 − ε; when ε falls below τ the two are
 *   tied and the leaf splits on A anyway. The test runs each time `checkInterval` weight has reached
 *   the leaf since the last one; n is the weight the leaf has seen since it was made.
 * - Numeric features: the observed values per leaf with their target statistics, as the paper's
 *   extended binary search tree keeps them, held sorted in a typed array (`hoeffding-regression-tree-
 *   values.ts`), bounded to `splitPointLimit` values.
 * - Nominal features: per-category target statistics and the best binary partition of the
 *   categories (`hoeffding-regression-tree-split.ts`).
 * - Leaves predict the mean target of the rows that reached them (`leaf: 'mean'`) or a linear model
 *   trained by SGD on those rows (`leaf: 'linear'`: the model-tree leaves of the paper's title),
 *   the same model as `linear-regression` (`linear-regression-sgd.ts`). A new leaf starts from its
 *   parent's model with the target statistics of its side of the split and a fresh rate clock.
 * - Missing values (NaN, ±∞, or a code outside a nominal feature's range) follow the branch that
 *   more training weight has taken at that node, for training and prediction alike.
 * - Limits: leaves at `depthLimit` never split; when the tree holds more than `byteLimit` bytes, a
 *   leaf due for a split test drops its split statistics instead and only trains its predictor from
 *   then on (after the memory management of Domingos & Hulten 2000, which deactivates leaves; from
 *   memory).
 *
 * Prediction walks typed arrays and allocates nothing. The learner draws no random numbers: the seed
 * is accepted for the constructor shape every learner shares and has no effect.
 *
 * @example
 * const tree = new HoeffdingRegressionTree(schema, { leaf: 'mean', checkInterval: 100 });
 * tree.train(rows, i * width, target, 1);
 * const y = tree.predict(rows, j * width);
 */

/**
 * The regression tree's options (see `OptionTable`), with those of its linear leaves. checkInterval 200,
 * δ = 1e-7 and τ = 0.05 are the Hoeffding-tree settings of Domingos & Hulten (KDD 2000; PUBLISHED.md,
 * from memory), which the regression tree reuses; linear leaves as in the model trees of Ikonomovska et
 * al. 2011. depthLimit 20 is common practice; 64 split points per feature and leaf is our choice: on
 * Friedman #1 anything from 16 to 1,024 gave the same prequential error within noise, and fewer points
 * cost less memory and time.
 *
 * byteLimit 8 MiB is our choice, measured with bagging ×10 (`task: regression`'s default) on Friedman
 * #1, #2 and #3 as scikit-learn 1.9.1's `make_friedman1/2/3` write them (noise 1, 125 and 0.1;
 * 500,000, 300,000 and 300,000 rows) and on ggplot2's `diamonds` (53,940 rows, price from the other
 * columns, shuffled). Against 32 MiB: prequential RMSE 1.504 against 1.490 on #1, the only one where
 * the limit cost anything (1.336 against 1.292 over its last 100,000 rows); identical on #2, #3 and
 * `diamonds`, whose trees stay below 8 MiB. On #1 the ensemble stops at about 84 MB instead of growing
 * towards 320 MB, and runs 1.4× as fast over the 500,000 rows (2.4× over the last 100,000). 4 MiB cost
 * 4% of RMSE on #1, 2 MiB 11% (one run each, 5 December).
 */
export const HOEFFDING_REGRESSION_TREE_OPTIONS = {
  ...LINEAR_SGD_OPTIONS,
  leaf: {
    type: 'choice',
    choices: ['mean', 'linear'],
    default: 'linear',
    doc: 'what a leaf predicts: the mean target, or a linear model of the row',
  },
  checkInterval: {
    type: 'integer',
    atLeast: 1,
    default: 200,
    doc: 'weight a leaf sees between two split tests',
  },
  hoeffdingDelta: {
    type: 'number',
    above: 0,
    below: 1,
    default: 1e-7,
    doc: 'δ of the Hoeffding bound: the chance of splitting on a feature that is not the best',
  },
  tieBreak: {
    type: 'number',
    atLeast: 0,
    atMost: 1,
    default: 0.05,
    doc: 'τ: split on the leader anyway once ε < τ',
  },
  depthLimit: {
    type: 'integer',
    atLeast: 0,
    default: 20,
    doc: 'depth below which leaves may split (0: one leaf)',
  },
  byteLimit: {
    type: 'number',
    above: 0,
    default: 8 * 1024 * 1024,
    doc: 'size above which leaves stop collecting split statistics, in bytes',
  },
  splitPointLimit: {
    type: 'integer',
    atLeast: 2,
    default: 64,
    doc: 'distinct values each numeric feature keeps per leaf',
  },
} as const satisfies OptionTable;

export type HoeffdingRegressionTreeOptions = OptionsOf<typeof HOEFFDING_REGRESSION_TREE_OPTIONS>;

export type RegressionLeafKind = HoeffdingRegressionTreeOptions['leaf'];

export const HOEFFDING_REGRESSION_TREE_DEFAULTS: HoeffdingRegressionTreeOptions = defaultsOf(
  HOEFFDING_REGRESSION_TREE_OPTIONS,
);

const KIND = 'hoeffding-regression-tree';
const VERSION = 2;

// Node layout: ints [kind, feature, lower child, upper child, aux] and doubles [threshold, lower
// weight, upper weight] per node. aux is the leaf index of a leaf, the mask start of a nominal split.
const I_STRIDE = 5;
const KIND_AT = 0;
const FEATURE_AT = 1;
const LOWER_AT = 2;
const AUX_AT = 4;
const F_STRIDE = 3;
const NODE_LEAF = 0;
const NODE_NUMERIC = 1;
const NODE_NOMINAL = 2;
/** The room for nodes and mask entries a tree starts with; its tables double from there. */
const FIRST_ROOM = 16;
const EMPTY = new Float64Array(0);
const NO_VALUES: readonly ValueStore[] = [];

/** The mean leaf: the model state is just the clock and the target triple. */
const MEAN_MODEL: LeafModel = {
  stateLength: HEAD,
  predict: (state: Float64Array) => state[TARGET + 1]!,
  train(state: Float64Array, _row: Float64Array, _offset: number, target: number, weight: number): void {
    welfordAdd(state, TARGET, target, weight);
    state[CLOCK]! += weight;
  },
};

class Leaf {
  constructor(
    readonly node: number,
    readonly depth: number,
    /** The state of the leaf's predictor (see `LeafModel`). */
    readonly modelState: Float64Array,
    /** Weight seen while collecting split statistics (n of the Hoeffding bound). */
    public seen: number,
    public sinceCheck: number,
    public active: boolean,
    /** One value store per numeric feature while active. */
    public values: readonly ValueStore[],
    /** (weight, mean, M2) per category of each nominal feature while active. */
    public nominal: Float64Array,
  ) {}
}

interface LeafState {
  readonly node: number;
  readonly depth: number;
  readonly seen: number;
  readonly sinceCheck: number;
  readonly active: boolean;
  readonly model: string;
  readonly values: readonly ValueStoreState[];
  readonly nominal: string;
}

interface TreeState {
  readonly ints: string;
  readonly floats: string;
  readonly masks: string;
  readonly leaves: readonly LeafState[];
}

export class HoeffdingRegressionTree implements Regressor {
  readonly kind = KIND;
  readonly schema: FeatureSchema;
  readonly options: HoeffdingRegressionTreeOptions;
  private readonly leafModel: LeafModel;
  private readonly width: number;
  /** Categories of each column (0 for a numeric one). */
  private readonly categories: Int32Array;
  private readonly numericColumns: Int32Array;
  private readonly nominalColumns: Int32Array;
  /** Start of each nominal feature's category triples in a leaf's `nominal` array. */
  private readonly nominalStarts: Int32Array;
  private readonly nominalLength: number;
  private nodes = 1;
  private ints: Int32Array;
  private floats: Float64Array;
  private masks: Int32Array;
  private maskUsed = 0;
  private leaves: Leaf[] = [];
  /**
   * The leaves' bytes (`leafSize` summed), kept as they change: the byte limit is checked at every split
   * test, and summing every leaf's stores there took about half of a regression bagging's time.
   */
  private leafBytes = 0;
  // Scratch for split tests, sized once.
  private readonly order: Int32Array;
  private readonly candidate: SplitCandidate;
  private readonly best: SplitCandidate;

  constructor(schema: FeatureSchema, options: Partial<HoeffdingRegressionTreeOptions> = {}, _seed: Seed = 0) {
    this.schema = checkSchema(KIND, schema);
    const o = resolveOptions(KIND, HOEFFDING_REGRESSION_TREE_OPTIONS, options);
    this.options = o;
    this.leafModel = o.leaf === 'linear' ? new LinearSgd(schema, o) : MEAN_MODEL;
    const features = schema.features;
    this.width = features.length;
    this.categories = Int32Array.from(features, (f) => (f.kind === 'nominal' ? f.values : 0));
    const numeric: number[] = [];
    const nominal: number[] = [];
    const starts: number[] = [];
    let length = 0;
    features.forEach((f, i) => {
      if (f.kind === 'numeric') numeric.push(i);
      else {
        nominal.push(i);
        starts.push(length);
        length += 3 * f.values;
      }
    });
    this.numericColumns = Int32Array.from(numeric);
    this.nominalColumns = Int32Array.from(nominal);
    this.nominalStarts = Int32Array.from(starts);
    this.nominalLength = length;
    const maxCategories = Math.max(1, ...this.categories);
    this.order = new Int32Array(maxCategories);
    this.candidate = new SplitCandidate(maxCategories);
    this.best = new SplitCandidate(maxCategories);
    this.ints = new Int32Array(I_STRIDE * FIRST_ROOM);
    this.floats = new Float64Array(F_STRIDE * FIRST_ROOM);
    this.masks = new Int32Array(FIRST_ROOM);
    const root = new Float64Array(this.leafModel.stateLength);
    this.leaves.push(this.newLeaf(0, 0, root, root.subarray(TARGET, TARGET + 3)));
    this.leafBytes = leafSize(this.leaves[0]!);
    this.markLeaf(0, 0);
  }

  /** Number of leaves. */
  get leafCount(): number {
    return this.leaves.length;
  }

  /** Depth of the deepest leaf (0 for a single leaf). */
  get depth(): number {
    let depth = 0;
    for (const leaf of this.leaves) depth = Math.max(depth, leaf.depth);
    return depth;
  }

  predict(row: Float64Array, offset: number): number {
    checkRow(KIND, row, offset, this.width);
    const leaf = this.leaves[this.route(row, offset, 0)]!;
    return this.leafModel.predict(leaf.modelState, row, offset);
  }

  train(row: Float64Array, offset: number, target: number, weight: number): void {
    checkRow(KIND, row, offset, this.width);
    checkTarget(KIND, target);
    checkWeight(KIND, weight);
    if (weight === 0) return;
    const index = this.route(row, offset, weight);
    const leaf = this.leaves[index]!;
    this.leafModel.train(leaf.modelState, row, offset, target, weight);
    if (!leaf.active) return;
    leaf.seen += weight;
    const numeric = this.numericColumns;
    for (let k = 0; k < numeric.length; k++) {
      const x = row[offset + numeric[k]!]!;
      if (isPresent(x)) this.leafBytes += leaf.values[k]!.add(x, target, weight);
    }
    const nominal = this.nominalColumns;
    for (let j = 0; j < nominal.length; j++) {
      const c = row[offset + nominal[j]!]!;
      if (nominalCode(c, this.categories[nominal[j]!]!) >= 0) {
        welfordAdd(leaf.nominal, this.nominalStarts[j]! + 3 * c, target, weight);
      }
    }
    leaf.sinceCheck += weight;
    if (leaf.sinceCheck >= this.options.checkInterval) {
      leaf.sinceCheck = 0;
      this.attemptSplit(index);
    }
  }

  snapshot(): LearnerSnapshot {
    const state: TreeState = {
      ints: encodeI32(this.ints.subarray(0, I_STRIDE * this.nodes)),
      floats: encodeF64(this.floats.subarray(0, F_STRIDE * this.nodes)),
      masks: encodeI32(this.masks.subarray(0, this.maskUsed)),
      leaves: this.leaves.map((leaf) => ({
        node: leaf.node,
        depth: leaf.depth,
        seen: leaf.seen,
        sinceCheck: leaf.sinceCheck,
        active: leaf.active,
        model: encodeF64(leaf.modelState),
        values: leaf.values.map((v) => v.state()),
        nominal: encodeF64(leaf.nominal),
      })),
    };
    return { kind: KIND, version: VERSION, schema: this.schema, options: { ...this.options }, state };
  }

  sizeBytes(): number {
    return (
      this.ints.byteLength +
      this.floats.byteLength +
      this.masks.byteLength +
      this.order.byteLength +
      2 * (this.best.mask.byteLength + 64) +
      this.leafBytes
    );
  }

  static restore(snapshot: LearnerSnapshot): HoeffdingRegressionTree {
    checkSnapshot(snapshot, KIND, VERSION);
    const tree = new HoeffdingRegressionTree(
      snapshot.schema,
      snapshot.options as Partial<HoeffdingRegressionTreeOptions>,
    );
    tree.load(snapshot.state as TreeState);
    return tree;
  }

  /** Walk from the root to a leaf, adding `weight` to each branch taken on a present value. */
  private route(row: Float64Array, offset: number, weight: number): number {
    const ints = this.ints;
    const floats = this.floats;
    let n = 0;
    for (;;) {
      const i = n * I_STRIDE;
      const kind = ints[i + KIND_AT]!;
      if (kind === NODE_LEAF) return ints[i + AUX_AT]!;
      const feature = ints[i + FEATURE_AT]!;
      const x = row[offset + feature]!;
      const f = n * F_STRIDE;
      let side: number;
      if (kind === NODE_NUMERIC) side = isPresent(x) ? (x <= floats[f]! ? 0 : 1) : -1;
      else
        side = nominalCode(x, this.categories[feature]!) >= 0 ? 1 - this.masks[ints[i + AUX_AT]! + x]! : -1;
      if (side < 0) side = floats[f + 1]! >= floats[f + 2]! ? 0 : 1;
      else if (weight > 0) floats[f + 1 + side]! += weight;
      n = ints[i + LOWER_AT + side]!;
    }
  }

  /**
   * The split test at one leaf, and the split when it passes. Over the byte limit the leaf
   * drops its split statistics instead, for good (the tree keeps what it has and stops growing there).
   */
  private attemptSplit(index: number): void {
    const leaf = this.leaves[index]!;
    if (this.sizeBytes() > this.options.byteLimit) {
      this.leafBytes -= leafSize(leaf);
      leaf.active = false;
      leaf.values = NO_VALUES;
      leaf.nominal = EMPTY;
      this.leafBytes += leafSize(leaf);
      return;
    }
    const best = this.best;
    const candidate = this.candidate;
    best.merit = 0;
    let second = 0;
    const consider = (feature: number, reduction: number): void => {
      if (!(reduction > 0)) return;
      candidate.feature = feature;
      candidate.merit = (reduction * (candidate.left[0]! + candidate.right[0]!)) / leaf.seen;
      if (candidate.merit > best.merit) {
        second = best.merit;
        best.copyFrom(candidate);
      } else if (candidate.merit > second) second = candidate.merit;
    };
    for (let k = 0; k < this.numericColumns.length; k++) {
      consider(this.numericColumns[k]!, leaf.values[k]!.bestSplit(candidate));
    }
    for (let j = 0; j < this.nominalColumns.length; j++) {
      const column = this.nominalColumns[j]!;
      const starts = this.nominalStarts[j]!;
      consider(
        column,
        bestNominalSplit(leaf.nominal, starts, this.categories[column]!, this.order, candidate),
      );
    }
    if (best.merit <= 0) return;
    const epsilon = hoeffdingBound(1, this.options.hoeffdingDelta, leaf.seen);
    if (second / best.merit < 1 - epsilon || epsilon < this.options.tieBreak) this.split(index, best);
  }

  /** Turn leaf `index` into a split node with two new leaves. */
  private split(index: number, split: SplitCandidate): void {
    const leaf = this.leaves[index]!;
    const n = leaf.node;
    this.ensureNodes(this.nodes + 2);
    const lower = this.nodes;
    const upper = lower + 1;
    this.nodes += 2;
    const i = n * I_STRIDE;
    const f = n * F_STRIDE;
    const feature = split.feature;
    const categories = this.categories[feature]!;
    this.ints[i + FEATURE_AT] = feature;
    this.ints[i + LOWER_AT] = lower;
    this.ints[i + LOWER_AT + 1] = upper;
    if (categories > 0) {
      this.ints[i + KIND_AT] = NODE_NOMINAL;
      this.ints[i + AUX_AT] = this.addMask(split.mask.subarray(0, categories));
    } else {
      this.ints[i + KIND_AT] = NODE_NUMERIC;
      this.ints[i + AUX_AT] = 0;
      this.floats[f] = split.threshold;
    }
    this.floats[f + 1] = split.left[0]!;
    this.floats[f + 2] = split.right[0]!;
    const depth = leaf.depth + 1;
    this.leaves[index] = this.newLeaf(lower, depth, leaf.modelState, split.left);
    this.leaves.push(this.newLeaf(upper, depth, leaf.modelState, split.right));
    this.leafBytes += leafSize(this.leaves[index]!) + leafSize(this.leaves.at(-1)!) - leafSize(leaf);
    this.markLeaf(lower, index);
    this.markLeaf(upper, this.leaves.length - 1);
  }

  /** A leaf whose model starts from `parent` with the target triple `target` and a fresh clock. */
  private newLeaf(node: number, depth: number, parent: Float64Array, target: Float64Array): Leaf {
    const model = parent.slice();
    model[CLOCK] = 0;
    model.set(target, TARGET);
    const active = depth < this.options.depthLimit;
    const limit = this.options.splitPointLimit;
    const values = active ? Array.from(this.numericColumns, () => new ValueStore(limit)) : NO_VALUES;
    const nominal = active ? new Float64Array(this.nominalLength) : EMPTY;
    return new Leaf(node, depth, model, 0, 0, active, values, nominal);
  }

  private markLeaf(node: number, leafIndex: number): void {
    const i = node * I_STRIDE;
    this.ints[i + KIND_AT] = NODE_LEAF;
    this.ints[i + FEATURE_AT] = -1;
    this.ints[i + LOWER_AT] = -1;
    this.ints[i + LOWER_AT + 1] = -1;
    this.ints[i + AUX_AT] = leafIndex;
  }

  private addMask(mask: Int32Array): number {
    const start = this.maskUsed;
    if (start + mask.length > this.masks.length) {
      const grown = new Int32Array(doubledRoom(FIRST_ROOM, start + mask.length));
      grown.set(this.masks);
      this.masks = grown;
    }
    this.masks.set(mask, start);
    this.maskUsed += mask.length;
    return start;
  }

  /** Room for `count` nodes, growing by doubling. */
  private ensureNodes(count: number): void {
    const capacity = this.ints.length / I_STRIDE;
    if (count <= capacity) return;
    const next = doubledRoom(FIRST_ROOM, count);
    const ints = new Int32Array(I_STRIDE * next);
    ints.set(this.ints);
    const floats = new Float64Array(F_STRIDE * next);
    floats.set(this.floats);
    this.ints = ints;
    this.floats = floats;
  }

  /** Replace this fresh tree's structure with a snapshot's, checking it before it can be walked. */
  private load(state: TreeState): void {
    const bad = (reason: string): never => {
      throw new ShoalError('invalid-snapshot', `${KIND} snapshot: ${reason}`);
    };
    const ints = decodeI32(state?.ints, `${KIND} nodes`);
    const floats = decodeF64(state?.floats, `${KIND} node weights`);
    const masks = decodeI32(state?.masks, `${KIND} masks`);
    const count = ints.length / I_STRIDE;
    if (!(Number.isInteger(count) && count >= 1) || floats.length !== F_STRIDE * count) {
      bad('node arrays disagree in length');
    }
    if (!Array.isArray(state.leaves)) bad('leaves must be a list');
    checkForwardLinks(ints, I_STRIDE, LOWER_AT, count, bad);
    if (!masks.every((m) => m === 0 || m === 1)) bad('a category mask holds a value other than 0 or 1');
    const leafNodes = new Int32Array(state.leaves.length).fill(-1);
    for (let n = 0; n < count; n++) {
      const i = n * I_STRIDE;
      const kind = ints[i + KIND_AT]!;
      const feature = ints[i + FEATURE_AT]!;
      const aux = ints[i + AUX_AT]!;
      const hasChildren = ints[i + LOWER_AT]! >= 0 && ints[i + LOWER_AT + 1]! >= 0;
      if (kind === NODE_LEAF) {
        if (ints[i + LOWER_AT]! !== -1 || ints[i + LOWER_AT + 1]! !== -1) bad(`leaf node ${n} has children`);
        if (!(aux >= 0 && aux < leafNodes.length) || leafNodes[aux] !== -1)
          bad(`node ${n} names leaf ${aux}`);
        leafNodes[aux] = n;
      } else {
        const expected = this.categories[feature]! > 0 ? NODE_NOMINAL : NODE_NUMERIC;
        if (!(feature >= 0 && feature < this.width) || kind !== expected || !hasChildren) {
          bad(`node ${n} is not a valid split`);
        }
        if (kind === NODE_NOMINAL && !(aux >= 0 && aux + this.categories[feature]! <= masks.length)) {
          bad(`node ${n} has a mask outside the mask table`);
        }
      }
    }
    const leafModel = this.leafModel;
    const leaves = state.leaves.map((s, index): Leaf => {
      const where = `${KIND} leaf ${index}`;
      if (s?.node !== leafNodes[index]) bad(`leaf ${index} is not where its node says`);
      if (!(Number.isInteger(s.depth) && s.depth >= 0)) bad(`leaf ${index} has depth ${s.depth}`);
      const counts = [s.seen, s.sinceCheck];
      if (!counts.every((c) => Number.isFinite(c) && c >= 0)) bad(`leaf ${index} has bad weight counts`);
      const state = decodeF64(s.model, `${where} model`);
      if (state.length !== leafModel.stateLength) bad(`leaf ${index} model has ${state.length} values`);
      const nominal = decodeF64(s.nominal, `${where} nominal statistics`);
      const active = s.active === true;
      const numericCount = active ? this.numericColumns.length : 0;
      if (!Array.isArray(s.values) || s.values.length !== numericCount) bad(`leaf ${index} value stores`);
      if (nominal.length !== (active ? this.nominalLength : 0)) bad(`leaf ${index} nominal statistics`);
      const limit = this.options.splitPointLimit;
      const values = s.values.map((v, k) => ValueStore.fromState(limit, v, `${where} feature ${k}`));
      return new Leaf(s.node, s.depth, state, s.seen, s.sinceCheck, active, values, active ? nominal : EMPTY);
    });
    if (leaves.length === 0) bad('a tree has at least one leaf');
    // Tables with the room the original's had (grown by doubling), so both report one size.
    const room = doubledRoom(FIRST_ROOM, count);
    this.ints = new Int32Array(I_STRIDE * room);
    this.ints.set(ints);
    this.floats = new Float64Array(F_STRIDE * room);
    this.floats.set(floats);
    this.masks = new Int32Array(doubledRoom(FIRST_ROOM, masks.length));
    this.masks.set(masks);
    this.maskUsed = masks.length;
    this.nodes = count;
    this.leaves = leaves;
    this.leafBytes = leaves.reduce((sum, leaf) => sum + leafSize(leaf), 0);
  }
}

/**
 * Check the child links of a snapshot's tree of `size` nodes (links at `first`, `first + 1` of each
 * `stride` ints; −1 = none). Nodes are appended after their parent, so in a sound tree every link
 * points forward and every node but the root (0) has exactly one parent; this rules out cycles and
 * out-of-range reads before a restored tree is walked.
 */
function checkForwardLinks(
  ints: Int32Array,
  stride: number,
  first: number,
  size: number,
  bad: (reason: string) => never,
): void {
  const parents = new Uint8Array(size);
  for (let i = 0; i < size; i++) {
    for (let side = 0; side < 2; side++) {
      const link = ints[i * stride + first + side]!;
      if (link === -1) continue;
      if (!(link > i && link < size) || parents[link] !== 0) bad(`node ${i} has a bad link ${link}`);
      parents[link] = 1;
    }
  }
  for (let i = 1; i < size; i++) if (parents[i] === 0) bad(`node ${i} is unreachable`);
}

/** A leaf's bytes: its predictor, its split statistics and a fixed allowance for the object. */
function leafSize(leaf: Leaf): number {
  let bytes = 64 + leaf.modelState.byteLength + leaf.nominal.byteLength;
  for (const v of leaf.values) bytes += v.sizeBytes();
  return bytes;
}
