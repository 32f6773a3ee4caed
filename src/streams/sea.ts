import { closedUnit, numeric, Rng, type Seed } from '../core/index.js';
import { numberIn } from './checks.js';
import {
  type GeneratorSnapshot,
  generatorSnapshot,
  generatorState,
  type StreamGenerator,
} from './generator.js';

/**
 * SEA concepts — Street & Kim, "A streaming ensemble algorithm (SEA) for large-scale classification",
 * KDD 2001 (from memory, PUBLISHED.md [memory]): three attributes uniform on [0, 10], only the first
 * two matter; the label is 1 iff f1 + f2 ≤ θ (concepts θ = 8, 9, 7, 9.5; any θ in [0, 20], the range
 * of f1 + f2, is accepted); a share `noise` of labels is flipped (10% in the paper).
 */
export interface SeaOptions {
  readonly threshold: number;
  readonly noise: number;
}

export const SEA_DEFAULTS: SeaOptions = { threshold: 8, noise: 0.1 };

export function sea(options: Partial<SeaOptions> = {}, seed: Seed = 1): StreamGenerator {
  const { threshold, noise } = { ...SEA_DEFAULTS, ...options };
  numberIn('sea', 'threshold', threshold, 0, 20);
  closedUnit('sea', 'noise', noise);
  let rng = new Rng(seed);
  return {
    name: 'sea',
    schema: { features: [numeric('f1'), numeric('f2'), numeric('f3')] },
    classes: ['0', '1'],
    next(row, offset) {
      const a = 10 * rng.next();
      const b = 10 * rng.next();
      row[offset] = a;
      row[offset + 1] = b;
      row[offset + 2] = 10 * rng.next();
      const label = a + b <= threshold ? 1 : 0;
      return rng.next() < noise ? 1 - label : label;
    },
    snapshot: (): GeneratorSnapshot => generatorSnapshot('sea', { rng: rng.state() }),
    restore(snapshot) {
      const state = generatorState(snapshot, 'sea');
      rng = Rng.fromState(state.rng);
    },
  };
}
