import { decodeF64, encodeF64, ShoalError } from '../core/index.js';

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
 * @example
 * const watch = new MissingShift(500, 1e-6);
 * if (watch.update(Number.isNaN(x))) alert('missing share moved');
 */
export class MissingShift {
  private readonly size: number;
  private readonly logTerm: number;
  private readonly recentBits: Uint8Array;
  private at = 0;
  private filled = 0;
  private recent = 0;
  private refMissing = 0;
  private refCount = 0;

  constructor(window: number, delta: number) {
    this.size = window;
    this.logTerm = Math.log(2 / delta) / 2;
    this.recentBits = new Uint8Array(window);
  }

  /** Feed whether this row's value is missing; true when the share has moved. */
  update(missing: boolean): boolean {
    const bit = missing ? 1 : 0;
    const size = this.size;
    if (this.filled === size) {
      const old = this.recentBits[this.at]!;
      this.recent -= old;
      this.refMissing += old;
      this.refCount++;
    } else {
      this.filled++;
    }
    this.recentBits[this.at] = bit;
    this.recent += bit;
    this.at = this.at + 1 === size ? 0 : this.at + 1;
    if (this.filled < size || this.refCount < size) return false;
    // Nothing missing in the window or before it: the shares are both 0 and equal (no test to make).
    if (this.recent === 0 && this.refMissing === 0) return false;
    const diff = this.recent / size - this.refMissing / this.refCount;
    if (Math.abs(diff) <= Math.sqrt(this.logTerm * (1 / size + 1 / this.refCount))) return false;
    this.reset();
    return true;
  }

  reset(): void {
    this.at = 0;
    this.filled = 0;
    this.recent = 0;
    this.refMissing = 0;
    this.refCount = 0;
  }

  state(): unknown {
    return {
      counts: encodeF64(Float64Array.of(this.at, this.filled, this.recent, this.refMissing, this.refCount)),
      bits: Buffer.from(this.recentBits).toString('base64'),
    };
  }

  load(state: unknown): void {
    const s = state as { counts?: unknown; bits?: unknown } | null;
    const counts = typeof s?.counts === 'string' ? decodeF64(s.counts) : null;
    const bits = typeof s?.bits === 'string' ? Buffer.from(s.bits, 'base64') : null;
    if (counts === null || counts.length !== 5 || bits === null || bits.length !== this.size) {
      throw new ShoalError('invalid-snapshot', 'input-monitor state: a missing-share watch is damaged');
    }
    this.at = counts[0]!;
    this.filled = counts[1]!;
    this.recent = counts[2]!;
    this.refMissing = counts[3]!;
    this.refCount = counts[4]!;
    this.recentBits.set(bits);
  }
}
