import { decodeF64, encodeF64, ShoalError } from '../core/index.js';

/** Per feature: the window's position, its filled length, missing values in it and before it, rows before it. */
const COUNTS = 5;

/**
 * A jump in how often one feature is missing — a field renamed or dropped upstream, a sensor gone
 * quiet — found by comparing the missing share of the last `window` rows with the share of every row
 * before them. By Hoeffding's inequality for the difference of two means of values in [0, 1] (Hoeffding,
 * "Probability inequalities for sums of bounded random variables", JASA 58, 1963),
 * P(|p̂_w − p̂_ref − (p_w − p_ref)| ≥ ε) ≤ 2 exp(−2ε² / (1/n_w + 1/n_ref)), so with
 * ε = √(ln(2/δ)/2 · (1/n_w + 1/n_ref)) a stationary share is flagged with probability at most δ per
 * test. After a flag the watch starts over (the rows after the jump become the new reference), so one
 * jump is flagged once.
 *
 * The watches of all the features of a schema live in columns (counts and recent-window bits), so that a
 * column of values runs through one monomorphic loop; feature `k`'s watch is independent of the others.
 *
 * @example
 * const watches = new MissingShifts(width, 500, 1e-6);
 * watches.column(k, values, k, width, rows, marks, k, 2); // marks[k + r·width] |= 2 when the share moved
 */
export class MissingShifts {
  private readonly size: number;
  private readonly logTerm: number;
  private readonly counts: Float64Array;
  private readonly recentBits: Uint8Array;

  constructor(features: number, window: number, delta: number) {
    this.size = window;
    this.logTerm = Math.log(2 / delta) / 2;
    this.counts = new Float64Array(features * COUNTS);
    this.recentBits = new Uint8Array(features * window);
  }

  /**
   * Feed feature `k` whether each of the `rows` values `values[at + i·stride]` is missing (NaN); when
   * the share has moved at value i (the watch then starts over), `marks[markAt + i·stride] |= mark`.
   */
  column(
    k: number,
    values: Float64Array,
    at: number,
    stride: number,
    rows: number,
    marks: Uint8Array,
    markAt: number,
    mark: number,
  ): void {
    const size = this.size;
    const logTerm = this.logTerm;
    const bits = this.recentBits;
    const first = k * size;
    const c = this.counts;
    const base = k * COUNTS;
    let position = c[base]!;
    let filled = c[base + 1]!;
    let recent = c[base + 2]!;
    let refMissing = c[base + 3]!;
    let refCount = c[base + 4]!;
    for (let i = 0, p = at, m = markAt; i < rows; i++, p += stride, m += stride) {
      const x = values[p]!;
      const bit = Number.isNaN(x) ? 1 : 0;
      if (filled === size) {
        const old = bits[first + position]!;
        recent -= old;
        refMissing += old;
        refCount++;
      } else {
        filled++;
      }
      bits[first + position] = bit;
      recent += bit;
      position = position + 1 === size ? 0 : position + 1;
      if (filled < size || refCount < size) continue;
      // Nothing missing in the window or before it: the shares are both 0 and equal (no test to make).
      if (recent === 0 && refMissing === 0) continue;
      const diff = recent / size - refMissing / refCount;
      if (Math.abs(diff) <= Math.sqrt(logTerm * (1 / size + 1 / refCount))) continue;
      position = filled = recent = refMissing = refCount = 0;
      marks[m]! |= mark;
    }
    c[base] = position;
    c[base + 1] = filled;
    c[base + 2] = recent;
    c[base + 3] = refMissing;
    c[base + 4] = refCount;
  }

  reset(): void {
    this.counts.fill(0);
  }

  /** Feature `k`'s state: its counts and its recent window's bits. */
  stateOf(k: number): unknown {
    return {
      counts: encodeF64(this.counts.slice(k * COUNTS, (k + 1) * COUNTS)),
      bits: Buffer.from(this.recentBits.subarray(k * this.size, (k + 1) * this.size)).toString('base64'),
    };
  }

  load(k: number, state: unknown): void {
    const s = state as { counts?: unknown; bits?: unknown } | null;
    const counts = typeof s?.counts === 'string' ? decodeF64(s.counts) : null;
    const bits = typeof s?.bits === 'string' ? Buffer.from(s.bits, 'base64') : null;
    if (counts === null || counts.length !== COUNTS || bits === null || bits.length !== this.size) {
      throw new ShoalError('invalid-snapshot', 'input-monitor state: a missing-share watch is damaged');
    }
    this.counts.set(counts, k * COUNTS);
    this.recentBits.set(bits, k * this.size);
  }
}
