import { decodeF64, decodeI32, encodeF64, encodeI32, ShoalError, welfordAdd } from '../core/index.js';
import {
  mergeTriple,
  type SplitCandidate,
  subtractTriple,
  varianceReduction,
} from './hoeffding-regression-tree-split.js';
import { doubledRoom } from './typed-arrays.js';

/**
 * The split-point store of one numeric feature in one leaf: a binary search tree over the values
 * observed, after the extended binary search tree (E-BST) of Ikonomovska, Gama & Džeroski, "Learning
 * model trees from evolving data streams", DMKD 23, 2011. Each node holds one distinct value and
 * the (weight, mean, M2) of the targets of the rows that carried it; one in-order pass then yields,
 * for every cut between neighbouring values, the statistics of the rows at or below the cut, and so
 * every candidate split's variance reduction.
 *
 * Memory is bounded: once `limit` values are held, a new value joins the nearest value already held
 * (its floor or ceiling in the search path), so the store degrades into a set of at most `limit`
 * candidate cut points instead of growing. Storage is two typed arrays grown by doubling:
 * [value, weight, mean, M2] per node and [lower child, upper child] per node (−1 = none).
 */

const F_STRIDE = 4;
const L_STRIDE = 2;
/** Bytes of one node's room: its four doubles and two links. */
const NODE_BYTES = 8 * F_STRIDE + 4 * L_STRIDE;
/** The room a store starts with (or the limit, when smaller). */
const FIRST_CAPACITY = 16;

/**
 * Check the child links of a snapshot's tree of `size` nodes (links at `first`, `first + 1` of each
 * `stride` ints; −1 = none). Nodes are appended after their parent, so in a sound tree every link
 * points forward and every node but the root (0) has exactly one parent; this rules out cycles and
 * out-of-range reads before a restored tree is walked.
 */
export function checkForwardLinks(
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

export interface ValueTreeState {
  readonly nodes: string;
  readonly links: string;
  readonly total: string;
}

export class ValueTree {
  private nodes: Float64Array;
  private links: Int32Array;
  private size = 0;
  /** Triple of every row added (the feature's present rows). */
  private readonly total = new Float64Array(3);

  constructor(private readonly limit: number) {
    const capacity = doubledRoom(FIRST_CAPACITY, 1, limit);
    this.nodes = new Float64Array(F_STRIDE * capacity);
    this.links = new Int32Array(L_STRIDE * capacity);
  }

  /** Number of distinct values held. */
  get count(): number {
    return this.size;
  }

  /** Total weight of the rows added. */
  get weight(): number {
    return this.total[0]!;
  }

  /**
   * Record value `x` (finite) with target `y` and weight `w` > 0; returns the bytes the store grew by
   * (0 but when a new value doubles its room), so that its tree keeps its size without summing every store.
   */
  add(x: number, y: number, w: number): number {
    welfordAdd(this.total, 0, y, w);
    const before = this.links.length;
    if (this.size === 0) {
      welfordAdd(this.nodes, this.newNode(x) * F_STRIDE + 1, y, w);
      return this.grownSince(before);
    }
    let n = 0;
    let floor = -1;
    let ceiling = -1;
    for (;;) {
      const key = this.nodes[n * F_STRIDE]!;
      if (x === key) {
        welfordAdd(this.nodes, n * F_STRIDE + 1, y, w);
        return 0;
      }
      const side = x < key ? 0 : 1;
      if (side === 0) ceiling = n;
      else floor = n;
      const child = this.links[n * L_STRIDE + side]!;
      if (child < 0) break;
      n = child;
    }
    let target: number;
    if (this.size < this.limit) {
      const side = x < this.nodes[n * F_STRIDE]! ? 0 : 1;
      target = this.newNode(x);
      this.links[n * L_STRIDE + side] = target;
    } else if (floor < 0) target = ceiling;
    else if (ceiling < 0) target = floor;
    else target = x - this.nodes[floor * F_STRIDE]! <= this.nodes[ceiling * F_STRIDE]! - x ? floor : ceiling;
    welfordAdd(this.nodes, target * F_STRIDE + 1, y, w);
    return this.grownSince(before);
  }

  /**
   * The cut with the largest variance reduction among the rows added: writes its threshold (the
   * midpoint between the neighbouring values, x ≤ threshold going left) and both sides' triples into
   * `out`, and returns the reduction (0 when fewer than two values are held). `stack` is scratch with
   * room for `limit` entries; nothing else is touched.
   */
  bestSplit(stack: Int32Array, out: SplitCandidate): number {
    if (this.size < 2) return 0;
    const nodes = this.nodes;
    const links = this.links;
    const wp = this.total[0]!;
    const mp = this.total[1]!;
    const prefix = new Float64Array(3);
    let best = 0;
    let previous = 0;
    let depth = 0;
    let n = 0;
    // Iterative in-order traversal: no recursion, so a degenerate (sorted-input) tree cannot overflow.
    while (depth > 0 || n >= 0) {
      while (n >= 0) {
        stack[depth++] = n;
        n = links[n * L_STRIDE]!;
      }
      n = stack[--depth]!;
      const f = n * F_STRIDE;
      const key = nodes[f]!;
      if (prefix[0]! > 0) {
        const vr = varianceReduction(prefix[0]!, prefix[1]!, wp, mp);
        if (vr > best) {
          best = vr;
          out.threshold = previous + (key - previous) / 2;
          out.left.set(prefix);
        }
      }
      mergeTriple(prefix, 0, nodes, f + 1);
      previous = key;
      n = links[n * L_STRIDE + 1]!;
    }
    if (best > 0) subtractTriple(this.total, 0, out.left, 0, out.right);
    return best;
  }

  sizeBytes(): number {
    return this.nodes.byteLength + this.links.byteLength + this.total.byteLength + 32;
  }

  state(): ValueTreeState {
    return {
      nodes: encodeF64(this.nodes.subarray(0, F_STRIDE * this.size)),
      links: encodeI32(this.links.subarray(0, L_STRIDE * this.size)),
      total: encodeF64(this.total),
    };
  }

  static fromState(limit: number, state: ValueTreeState, what: string): ValueTree {
    const nodes = decodeF64(state?.nodes, `${what} values`);
    const links = decodeI32(state?.links, `${what} links`);
    const total = decodeF64(state?.total, `${what} total`);
    const size = nodes.length / F_STRIDE;
    const bad = (reason: string): never => {
      throw new ShoalError('invalid-snapshot', `${what}: ${reason}`);
    };
    if (!Number.isInteger(size) || links.length !== L_STRIDE * size)
      bad('values and links disagree in length');
    if (size > limit) bad(`${size} values exceed the limit of ${limit}`);
    if (total.length !== 3) bad('the total must be one (weight, mean, M2) triple');
    checkForwardLinks(links, L_STRIDE, 0, size, bad);
    const tree = new ValueTree(limit);
    // The room the original had, so both report one size and the tree's byte limit acts at the same rows.
    tree.ensure(doubledRoom(FIRST_CAPACITY, size, limit));
    tree.nodes.set(nodes);
    tree.links.set(links);
    tree.total.set(total);
    tree.size = size;
    return tree;
  }

  /** The bytes the room grew by since it held `links` links. */
  private grownSince(links: number): number {
    return ((this.links.length - links) / L_STRIDE) * NODE_BYTES;
  }

  private newNode(x: number): number {
    this.ensure(this.size + 1);
    const n = this.size++;
    this.nodes[n * F_STRIDE] = x;
    this.links[n * L_STRIDE] = -1;
    this.links[n * L_STRIDE + 1] = -1;
    return n;
  }

  /** Room for `count` nodes, growing by doubling up to the limit. */
  private ensure(count: number): void {
    const capacity = this.links.length / L_STRIDE;
    if (count <= capacity) return;
    const next = doubledRoom(FIRST_CAPACITY, count, this.limit);
    const nodes = new Float64Array(F_STRIDE * next);
    nodes.set(this.nodes);
    const links = new Int32Array(L_STRIDE * next);
    links.set(this.links);
    this.nodes = nodes;
    this.links = links;
  }
}
