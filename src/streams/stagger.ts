import { closedUnit, nominal, oneOf, Rng, type Seed } from '../core/index.js';
import {
  type GeneratorSnapshot,
  generatorSnapshot,
  generatorState,
  type StreamGenerator,
} from './generator.js';
import { noisyLabel } from './label-noise.js';

/**
 * STAGGER concepts — Schlimmer & Granger, "Incremental learning from noisy data", Machine Learning
 * 1(3), 1986 (from memory, PUBLISHED.md [memory]): size ∈ {small, medium, large}, color ∈ {red, green,
 * blue}, shape ∈ {square, circular, triangular}, each uniform. Concept a: size = small ∧ color = red;
 * b: color = green ∨ shape = circular; c: size ∈ {medium, large}. Noise-free by default.
 */
export type StaggerConcept = 'a' | 'b' | 'c';

export interface StaggerOptions {
  readonly concept: StaggerConcept;
  readonly noise: number;
}

export const STAGGER_DEFAULTS: StaggerOptions = { concept: 'a', noise: 0 };

const SIZE = ['small', 'medium', 'large'];
const COLOR = ['red', 'green', 'blue'];
const SHAPE = ['square', 'circular', 'triangular'];

export function stagger(options: Partial<StaggerOptions> = {}, seed: Seed = 1): StreamGenerator {
  const { concept, noise } = { ...STAGGER_DEFAULTS, ...options };
  oneOf('stagger', 'concept', concept, ['a', 'b', 'c'] as const);
  closedUnit('stagger', 'noise', noise);
  let rng = new Rng(seed);
  const rule =
    concept === 'a'
      ? (size: number, color: number) => size === 0 && color === 0
      : concept === 'b'
        ? (_size: number, color: number, shape: number) => color === 1 || shape === 1
        : (size: number) => size >= 1;
  return {
    name: 'stagger',
    schema: { features: [nominal('size', SIZE), nominal('color', COLOR), nominal('shape', SHAPE)] },
    classes: ['0', '1'],
    next(row, offset) {
      const size = rng.int(3);
      const color = rng.int(3);
      const shape = rng.int(3);
      row[offset] = size;
      row[offset + 1] = color;
      row[offset + 2] = shape;
      return noisyLabel(rng, noise, rule(size, color, shape) ? 1 : 0, 2);
    },
    snapshot: (): GeneratorSnapshot => generatorSnapshot('stagger', { rng: rng.state() }),
    restore(snapshot) {
      const state = generatorState(snapshot, 'stagger');
      rng = Rng.fromState(state.rng);
    },
  };
}
