import { ShoalError } from '../core/index.js';
import type { HistogramView } from './source.js';

/**
 * A histogram with fixed bounds that allocates nothing per observation: what a driver records once
 * per batch (rows per batch, time to score it) and telemetry reads at scrape time.
 *
 * @example
 * const latency = new Buckets([0.001, 0.01, 0.1, 1]);
 * latency.observe(0.004);   // counts[1] += 1
 */
export class Buckets implements HistogramView {
  readonly bounds: readonly number[];
  readonly counts: Float64Array;
  sum = 0;
  count = 0;

  constructor(bounds: readonly number[]) {
    for (let i = 0; i < bounds.length; i++) {
      if (!Number.isFinite(bounds[i]) || (i > 0 && !(bounds[i]! > bounds[i - 1]!)))
        throw new ShoalError('invalid-parameter', `buckets: bounds must be finite and rising, got ${bounds}`);
    }
    this.bounds = [...bounds];
    this.counts = new Float64Array(bounds.length + 1);
  }

  observe(value: number): void {
    const bounds = this.bounds;
    let i = 0;
    while (i < bounds.length && value > bounds[i]!) i++;
    this.counts[i]!++;
    this.sum += value;
    this.count++;
  }
}
