import { Rng, sigmoid } from '../../src/core/index.js';
import type { DriftDetector, DriftLevel } from '../../src/drift/index.js';

export { median } from '../bench/harness.js';

/**
 * Seeded 0/1 error streams for the detector tests. At each step the value comes from the new concept
 * with probability `share(t)` and from the old one otherwise; a concept is a Bernoulli error rate.
 * An abrupt change is a step share, a gradual one the sigmoid join of Bifet et al., KDD 2009
 * (PUBLISHED.md): share(t) = 1 / (1 + e^(−4(t − t₀)/W)).
 */
export function errorStream(
  seed: number,
  length: number,
  before: number,
  after: number,
  share: (t: number) => number,
): Float64Array {
  const rng = new Rng(seed);
  const out = new Float64Array(length);
  for (let t = 0; t < length; t++) {
    const rate = rng.next() < share(t) ? after : before;
    out[t] = rng.next() < rate ? 1 : 0;
  }
  return out;
}

export const stationary = (): number => 0;

export function abrupt(at: number): (t: number) => number {
  return (t) => (t >= at ? 1 : 0);
}

/** The sigmoid join of Bifet et al., KDD 2009 (PUBLISHED.md), centre t₀ and width W. */
export function sigmoidJoin(centre: number, width: number): (t: number) => number {
  return (t) => sigmoid((4 * (t - centre)) / width);
}

/** Feed `values` to `detector`; returns the level after each value. */
export function levels(detector: DriftDetector, values: Float64Array): DriftLevel[] {
  const out: DriftLevel[] = new Array(values.length);
  for (let t = 0; t < values.length; t++) out[t] = detector.update(values[t]!);
  return out;
}

/** The first index ≥ `from` at which `detector` answers `drift` (feeding every value), or −1. */
export function firstDrift(detector: DriftDetector, values: Float64Array, from: number): number {
  let found = -1;
  for (let t = 0; t < values.length; t++) {
    if (detector.update(values[t]!) === 'drift' && t >= from && found < 0) found = t;
  }
  return found;
}

/** Number of `drift` answers over the whole stream. */
export function driftCount(detector: DriftDetector, values: Float64Array): number {
  let alarms = 0;
  for (let t = 0; t < values.length; t++) if (detector.update(values[t]!) === 'drift') alarms++;
  return alarms;
}
