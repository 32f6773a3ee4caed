import { ShoalError } from './errors.js';

/**
 * Weighted running mean and variance in one pass (West, "Updating mean and variance estimates: an
 * improved method", CACM 22(9), 1979, the weighted form of Welford's 1962 update).
 *
 * Hot paths keep many of these side by side in one `Float64Array`: three slots each,
 * [total weight, mean, sum of weighted squared deviations]. `welfordAdd` updates one such triple in
 * place without allocating; `RunningStats` wraps a single triple for everyone else.
 */

export const WELFORD_SLOTS = 3;

/** Add `x` with weight `w` (> 0) to the triple at `offset` of `buffer`. */
export function welfordAdd(buffer: Float64Array, offset: number, x: number, w: number): void {
  const total = buffer[offset]! + w;
  const mean = buffer[offset + 1]!;
  const delta = x - mean;
  const nextMean = mean + (w / total) * delta;
  buffer[offset] = total;
  buffer[offset + 1] = nextMean;
  buffer[offset + 2]! += w * delta * (x - nextMean);
}

/** Population variance (divide by the total weight) of the triple at `offset`; 0 when empty. */
export function welfordVariance(buffer: Float64Array, offset: number): number {
  const total = buffer[offset]!;
  return total > 0 ? Math.max(0, buffer[offset + 2]!) / total : 0;
}

/** Sample variance (divide by total weight − 1, frequency weights) of the triple; 0 when total ≤ 1. */
export function welfordSampleVariance(buffer: Float64Array, offset: number): number {
  const total = buffer[offset]!;
  return total > 1 ? Math.max(0, buffer[offset + 2]!) / (total - 1) : 0;
}

export interface RunningStatsState {
  readonly weight: number;
  readonly mean: number;
  readonly m2: number;
}

/**
 * @example
 * const s = new RunningStats();
 * s.add(2); s.add(4, 3);
 * s.mean; // 3.5
 */
export class RunningStats {
  private readonly triple = new Float64Array(WELFORD_SLOTS);

  /** Add `x` with weight `w` (default 1); a weight of 0 is ignored. */
  add(x: number, w = 1): void {
    if (!(w >= 0) || !Number.isFinite(w)) {
      throw new ShoalError(
        'invalid-weight',
        `running statistics: weight must be a finite number ≥ 0, got ${w}`,
      );
    }
    if (w > 0) welfordAdd(this.triple, 0, x, w);
  }

  get weight(): number {
    return this.triple[0]!;
  }

  get mean(): number {
    return this.triple[1]!;
  }

  /** Population variance. */
  get variance(): number {
    return welfordVariance(this.triple, 0);
  }

  /** Sample variance with frequency weights (Bessel's correction). */
  get sampleVariance(): number {
    return welfordSampleVariance(this.triple, 0);
  }

  get std(): number {
    return Math.sqrt(this.variance);
  }

  reset(): void {
    this.triple.fill(0);
  }

  state(): RunningStatsState {
    return { weight: this.triple[0]!, mean: this.triple[1]!, m2: this.triple[2]! };
  }

  static fromState(state: RunningStatsState): RunningStats {
    const s = new RunningStats();
    s.triple[0] = state.weight;
    s.triple[1] = state.mean;
    s.triple[2] = state.m2;
    return s;
  }
}
