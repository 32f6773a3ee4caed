import { HoeffdingTree } from './hoeffding-tree.js';
import type { Classifier } from './learner.js';

/**
 * Scoring the Hoeffding trees of an ensemble together, level by level. The trees' nodes are copied
 * into one arena of 16-byte records (`TreeNodes.copyInto`), where a leaf points to itself and no value
 * leaves it; each level then takes one step in every tree — `first + (x > threshold)`, with no test for
 * leaves — so the members' walks, independent of each other, overlap their memory reads instead of
 * waiting on them one tree after another. After as many levels as the deepest tree has, every walk
 * stands on its leaf, and each tree scores the row there.
 *
 * A tree that split since is copied again into its own region of the arena (each has room for twice
 * the nodes it had when the arena was built), so a split costs a copy of that tree alone; the whole
 * arena is built again when a tree outgrows its region or another learner takes a seat.
 * Forests with a nominal split, seats held by other learners, and rows with a missing value are left to
 * the members' own walks (`walk` returns false).
 *
 * Training takes the same walk: a member's leaf stays right until that member itself learns from the
 * row, so every member can be walked before any of them trains, and the members' own argument checks
 * (the ensemble checked the row and the label once) are skipped.
 *
 * @example
 * const walked = forest.walk(seats, rows, i * width);
 * for (let m = 0; m < seats.length; m++)
 *   preds[m] = walked ? forest.score(m, rows, i * width, probs, m * classes) : seats[m].member.score(rows, i * width, probs, m * classes);
 */
export class TreeForest {
  private trees: HoeffdingTree[] = [];
  /** Each member's learner and split count when the arena was built. */
  private members: Classifier[] = [];
  private structures = new Float64Array(0);
  /** Where each tree's nodes start in the arena, and the node each walk stands on. */
  private starts = new Int32Array(0);
  /** Nodes each tree's region has room for, and the depth of its deepest leaf. */
  private room = new Int32Array(0);
  private depths = new Int32Array(0);
  private at = new Int32Array(0);
  private hotF = new Float64Array(0);
  private hotI = new Int32Array(0);
  private levels = 0;
  private width = 0;
  private usable = false;

  /**
   * Walk every seat's tree to its leaf for the row at `offset` and return true; or return false when the
   * walk is not for these members or this row (then the members walk on their own). The row must have
   * been checked by the caller. The leaves reached are read with `score` and `scoreTrain`, and stay
   * right for a member until that member itself learns.
   */
  walk(seats: readonly { readonly member: Classifier }[], row: Float64Array, offset: number): boolean {
    const count = seats.length;
    if (count !== this.members.length) this.build(seats);
    else {
      for (let m = 0; m < count; m++) {
        const member = seats[m]!.member;
        if (member !== this.members[m]) {
          this.build(seats);
          break;
        }
        if (member instanceof HoeffdingTree && member.structure !== this.structures[m] && !this.refresh(m)) {
          this.build(seats);
          break;
        }
      }
    }
    if (!this.usable) return false;
    for (let j = 0; j < this.width; j++) if (Number.isNaN(row[offset + j]!)) return false;
    const hotF = this.hotF;
    const hotI = this.hotI;
    const at = this.at;
    at.set(this.starts);
    for (let level = 0; level < this.levels; level++) {
      for (let m = 0; m < count; m++) {
        const n = at[m]!;
        at[m] = hotI[4 * n + 3]! + Number(row[offset + hotI[4 * n + 2]!]! > hotF[2 * n]!);
      }
    }
    return true;
  }

  /** Member `m`'s `score` at the leaf the last `walk` reached. */
  score(m: number, row: Float64Array, offset: number, out: Float64Array, outOffset: number): number {
    return this.trees[m]!.scoreAt(this.at[m]! - this.starts[m]!, row, offset, out, outOffset);
  }

  /** Member `m`'s `scoreTrain` at the leaf the last `walk` reached, unchecked (see `scoreTrainAt`). */
  scoreTrain(
    m: number,
    row: Float64Array,
    offset: number,
    label: number,
    weight: number,
    out: Float64Array,
    outOffset: number,
  ): number {
    return this.trees[m]!.scoreTrainAt(
      this.at[m]! - this.starts[m]!,
      row,
      offset,
      label,
      weight,
      out,
      outOffset,
    );
  }

  /**
   * Copy every tree into a fresh arena, each in a region of twice its nodes, so that a tree that splits
   * is copied again into its own region (`refresh`) until it outgrows it.
   */
  private build(seats: readonly { readonly member: Classifier }[]): void {
    const count = seats.length;
    this.members = seats.map((s) => s.member);
    this.structures = Float64Array.from(this.members, (m) => (m instanceof HoeffdingTree ? m.structure : 0));
    this.usable = this.members.every((m) => m instanceof HoeffdingTree);
    if (!this.usable) return;
    const trees = this.members as HoeffdingTree[];
    this.trees = trees;
    this.starts = new Int32Array(count);
    this.room = new Int32Array(count);
    this.depths = new Int32Array(count);
    this.at = new Int32Array(count);
    let total = 0;
    for (let m = 0; m < count; m++) {
      this.starts[m] = total;
      this.room[m] = Math.max(16, 2 * trees[m]!.nodeCount);
      total += this.room[m]!;
    }
    if (this.hotF.length < 2 * total) {
      this.hotF = new Float64Array(Math.max(2 * total, 2 * this.hotF.length));
      this.hotI = new Int32Array(this.hotF.buffer);
    }
    this.width = trees[0]?.schema.features.length ?? 0;
    for (let m = 0; m < count && this.usable; m++) this.usable = this.copy(m);
  }

  /** Copy tree `m` again after it split, into its own region; false when it no longer fits there. */
  private refresh(m: number): boolean {
    const tree = this.trees[m]!;
    if (tree.nodeCount > this.room[m]!) return false;
    this.structures[m] = tree.structure;
    if (this.usable) this.usable = this.copy(m);
    return true;
  }

  private copy(m: number): boolean {
    const tree = this.trees[m]!;
    this.depths[m] = tree.depthReached;
    let levels = 0;
    for (const d of this.depths) levels = Math.max(levels, d);
    this.levels = levels;
    return tree.copyNodesInto(this.hotF, this.hotI, this.starts[m]!);
  }
}
