import type { Feature } from '../core/index.js';

/**
 * The bounded vocabulary of one nominal column: category names become codes in order of first
 * appearance, so that a learner can size its tables once from `Feature.values`.
 *
 * - Closed (as many codes as listed categories, as for a boolean column): an unknown name has no code.
 * - Open (more codes than listed categories): new names take the next free code until only the last
 *   code is left; that code is the overflow bucket that every later new name shares.
 */
export class Vocabulary {
  /** Number of codes, as in `Feature.values`. */
  readonly capacity: number;
  readonly open: boolean;
  private readonly codes = new Map<string, number>();
  private readonly list: string[] = [];
  /** Values given the overflow code because the vocabulary was full. */
  overflowed = 0;

  constructor(feature: Feature, known: readonly string[] = feature.categories ?? []) {
    this.capacity = feature.values;
    this.open = feature.values > (feature.categories?.length ?? 0);
    for (const name of known) {
      if (this.codes.has(name)) continue;
      this.codes.set(name, this.list.length);
      this.list.push(name);
    }
  }

  /** The code of `name`, adding it if there is room; the overflow code when full; −1 if closed and unknown. */
  code(name: string): number {
    const found = this.codes.get(name);
    if (found !== undefined) return found;
    if (!this.open) return -1;
    if (this.list.length >= this.capacity - 1) {
      this.overflowed++;
      return this.capacity - 1;
    }
    const code = this.list.length;
    this.list.push(name);
    this.codes.set(name, code);
    return code;
  }

  /** Names of the codes given so far (index = code); the overflow code, if any, is not listed. */
  names(): readonly string[] {
    return this.list;
  }
}
