import type { Rng } from '../core/index.js';

/**
 * Class-label noise: with probability `noise` the true label is replaced by another class, chosen
 * uniformly among the other `classes − 1` (for two classes: flipped). No draw is made when `noise` is 0,
 * so a noise-free stream spends no randomness on it.
 */
export function noisyLabel(rng: Rng, noise: number, label: number, classes: number): number {
  if (noise === 0 || rng.next() >= noise) return label;
  return classes === 2 ? 1 - label : (label + 1 + rng.int(classes - 1)) % classes;
}
