import { decodeF64, decodeI32, encodeF64, encodeI32, ShoalError } from '../core/index.js';

/**
 * The nodes of a Hoeffding tree, as a flat arena. A walk reads only 16-byte hot records —
 * [threshold (float64) | feature (int32, −1 for a leaf) | first child (int32)] — so four nodes share a
 * cache line; the leaf index, the depth and the child that takes missing values are cold columns, read
 * once per walk or per split. The children of a node are consecutive: a numeric split's two (at or
 * below the threshold, above it), a nominal split's one per category, so a step is `first + branch`.
 *
 * Missing values follow the branch the split sent most weight to (by the split attribute's statistics
 * when the split was made), so no weight is counted on the walk.
 */

/** Doubles per hot record (threshold, then the two int32 fields packed in the second double). */
const HOT = 2;
const I_FEATURE = 2;
const I_FIRST = 3;
/**
 * Bytes per node counted against the memory cap. The arena holds 28 (the hot record and three cold
 * columns); the cap still counts the 36 of the former layout, so that it keeps the trees it kept.
 */
export const NODE_BYTES = 36;
/** The high word of a quiet NaN, and where a double's high and low int32 words sit on this platform. */
const QUIET_NAN_HIGH = 0x7ff80000;
const HIGH_WORD = new Int32Array(new Float64Array([-0]).buffer)[1] !== 0 ? 1 : 0;
const LOW_WORD = 1 - HIGH_WORD;

/**
 * A step of a forest arena packs the first child above the feature: `first << FEATURE_BITS | feature`.
 * So a forest walks schemas of up to 1,024 features and arenas of up to 4,194,304 nodes (wider schemas
 * and larger forests walk member by member). The widths are constants: V8 folds them into the walk,
 * where a shift read from a field cost bagging ×10 6% (alternated builds in one process).
 */
export const FEATURE_BITS = 10;
export const FEATURE_MASK = (1 << FEATURE_BITS) - 1;
const MAX_ARENA_NODES = 2 ** (32 - FEATURE_BITS);

/**
 * A forest's walk records (see `TreeForest`), one per node in two columns: the threshold, and the
 * feature and first child packed in one int32 step, so that a step reads 12 bytes from two dense
 * columns. `words` views the thresholds as int32 pairs.
 */
export interface ForestArena {
  readonly thresholds: Float64Array;
  readonly words: Int32Array;
  readonly steps: Int32Array;
}

/** The leaf index a forest arena's leaf record `n` carries in its threshold (see `copyInto`). */
export function forestLeaf(arena: ForestArena, n: number): number {
  return arena.words[2 * n + LOW_WORD]!;
}

export interface NodesState {
  readonly nodes: number;
  readonly feature: string;
  readonly threshold: string;
  readonly firstChild: string;
  readonly missingChild: string;
  readonly leafOf: string;
  readonly depth: string;
}

function grownI32(a: Int32Array, size: number): Int32Array<ArrayBuffer> {
  const b = new Int32Array(size);
  b.set(a.subarray(0, Math.min(a.length, size)));
  return b;
}

export class TreeNodes {
  count = 0;
  /** The hot records, as doubles (threshold at 2n) and as int32s (feature at 4n + 2, first at 4n + 3). */
  hotF = new Float64Array(16 * HOT);
  hotI = new Int32Array(this.hotF.buffer);
  /** The leaf index of a leaf node, −1 for an internal one. */
  leafOf = new Int32Array(16);
  depth = new Int32Array(16);
  /** The branch (0-based, from the first child) that missing values follow. */
  missing = new Int32Array(16);

  /** Append a leaf node for leaf `leaf`; returns the node index. */
  addLeaf(depth: number, leaf: number): number {
    if (this.count === this.leafOf.length) this.allocate(this.count * 2);
    const n = this.count++;
    this.hotF[HOT * n] = 0;
    this.hotI[4 * n + I_FEATURE] = -1;
    this.hotI[4 * n + I_FIRST] = -1;
    this.leafOf[n] = leaf;
    this.depth[n] = depth;
    this.missing[n] = 0;
    return n;
  }

  /** Turn leaf node `n` into a split on `feature` whose children start at node `first`. */
  setSplit(n: number, feature: number, threshold: number, first: number, missing: number): void {
    this.hotF[HOT * n] = threshold;
    this.hotI[4 * n + I_FEATURE] = feature;
    this.hotI[4 * n + I_FIRST] = first;
    this.leafOf[n] = -1;
    this.missing[n] = missing;
  }

  feature(n: number): number {
    return this.hotI[4 * n + I_FEATURE]!;
  }

  /**
   * Walk from the root to a leaf node. A numeric step is branch-free but for missing values (the
   * comparison's 0 or 1 picks the child); a nominal step takes the category's child, and a code that
   * is not a category counts as missing. `cardinality` is 0 for a numeric feature.
   */
  route(row: Float64Array, offset: number, cardinality: Int32Array): number {
    const hotF = this.hotF;
    const hotI = this.hotI;
    let n = 0;
    let f = hotI[I_FEATURE]!;
    while (f >= 0) {
      const x = row[offset + f]!;
      const first = hotI[4 * n + I_FIRST]!;
      const v = cardinality[f]!;
      if (v === 0) {
        n = !Number.isNaN(x) ? first + Number(x > hotF[HOT * n]!) : first + this.missing[n]!;
      } else {
        n = x >= 0 && x < v && (x | 0) === x ? first + x : first + this.missing[n]!;
      }
      f = hotI[4 * n + I_FEATURE]!;
    }
    return n;
  }

  /**
   * Copy the nodes into a forest arena (see `TreeForest`) at node `base`: children shifted by `base`, and
   * each leaf a record that points to itself and that no value leaves, so that a walk can take every
   * step without testing for leaves. A leaf's threshold is a quiet NaN whose low 32 bits are its leaf
   * index (`forestLeaf`): no number is above a NaN, and the walk that stops on the record reads the
   * leaf from the threshold it already holds, not from the cold column. Returns false, copying nothing
   * more, at the first nominal split (a forest walk compares numbers only), or when the nodes or the
   * features do not fit a step.
   */
  copyInto(arena: ForestArena, base: number, cardinality: Int32Array): boolean {
    const { thresholds, words, steps } = arena;
    if (base + this.count > MAX_ARENA_NODES || cardinality.length > FEATURE_MASK + 1) return false;
    for (let n = 0; n < this.count; n++) {
      const at = base + n;
      const f = this.hotI[4 * n + I_FEATURE]!;
      if (f < 0) {
        words[2 * at + LOW_WORD] = this.leafOf[n]!;
        words[2 * at + HIGH_WORD] = QUIET_NAN_HIGH;
        steps[at] = at << FEATURE_BITS;
      } else {
        if (cardinality[f] !== 0) return false;
        thresholds[at] = this.hotF[HOT * n]!;
        steps[at] = ((base + this.hotI[4 * n + I_FIRST]!) << FEATURE_BITS) | f;
      }
    }
    return true;
  }

  /** The deepest leaf's depth. */
  maxDepth(): number {
    let depth = 0;
    for (let n = 0; n < this.count; n++) if (this.leafOf[n]! >= 0) depth = Math.max(depth, this.depth[n]!);
    return depth;
  }

  snapshot(): NodesState {
    const n = this.count;
    return {
      nodes: n,
      feature: encodeI32(Int32Array.from({ length: n }, (_, i) => this.hotI[4 * i + I_FEATURE]!)),
      threshold: encodeF64(Float64Array.from({ length: n }, (_, i) => this.hotF[HOT * i]!)),
      firstChild: encodeI32(Int32Array.from({ length: n }, (_, i) => this.hotI[4 * i + I_FIRST]!)),
      missingChild: encodeI32(this.missing.subarray(0, n)),
      leafOf: encodeI32(this.leafOf.subarray(0, n)),
      depth: encodeI32(this.depth.subarray(0, n)),
    };
  }

  /** Load the nodes of a snapshot, each column checked for its length. */
  restore(s: NodesState, owner: string): void {
    const n = s.nodes;
    const column = <T extends { length: number }>(values: T, what: string): T => {
      if (values.length !== n) {
        throw new ShoalError(
          'invalid-snapshot',
          `${owner}: node column ${what} has ${values.length} entries, the snapshot says ${n} nodes`,
        );
      }
      return values;
    };
    const i32 = (text: string, what: string) => column(decodeI32(text, `${owner} ${what}`), what);
    this.count = 0;
    this.allocate(Math.max(16, n));
    this.count = n;
    const feature = i32(s.feature, 'feature');
    const first = i32(s.firstChild, 'firstChild');
    const threshold = column(decodeF64(s.threshold, `${owner} threshold`), 'threshold');
    for (let i = 0; i < n; i++) {
      this.hotF[HOT * i] = threshold[i]!;
      this.hotI[4 * i + I_FEATURE] = feature[i]!;
      this.hotI[4 * i + I_FIRST] = first[i]!;
    }
    this.missing.set(i32(s.missingChild, 'missingChild'));
    this.leafOf.set(i32(s.leafOf, 'leafOf'));
    this.depth.set(i32(s.depth, 'depth'));
  }

  /** Room for `cap` nodes, keeping the first `count`. */
  private allocate(cap: number): void {
    const hotF = new Float64Array(cap * HOT);
    hotF.set(this.hotF.subarray(0, this.count * HOT));
    this.hotF = hotF;
    this.hotI = new Int32Array(hotF.buffer);
    this.leafOf = grownI32(this.leafOf, cap);
    this.depth = grownI32(this.depth, cap);
    this.missing = grownI32(this.missing, cap);
  }
}
