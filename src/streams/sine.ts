import { closedUnit, numeric, oneOf, Rng, type Seed, ShoalError } from '../core/index.js';
import {
  type GeneratorSnapshot,
  generatorSnapshot,
  generatorState,
  type StreamGenerator,
} from './generator.js';
import { noisyLabel } from './label-noise.js';

/**
 * SINE1 and SINE2 — Gama, Medas, Castillo & Rodrigues, "Learning with drift detection", SBIA 2004
 * (from memory, PUBLISHED.md [memory]): x, y uniform on [0, 1]; SINE1 labels a point 1 iff
 * y < sin(x), SINE2 iff y < 0.5 + 0.3 sin(3πx). The paper's drift reverses the labels, which
 * `reversed` does. `noise` flips a further share of labels (none in the paper).
 *
 * @example
 * const gen = sine({ curve: 'sine2', reversed: true }, 7);
 */
export type SineCurve = 'sine1' | 'sine2';

export interface SineOptions {
  readonly curve: SineCurve;
  readonly reversed: boolean;
  readonly noise: number;
}

export const SINE_DEFAULTS: SineOptions = { curve: 'sine1', reversed: false, noise: 0 };

const OWNER = 'sine';

export function sine(options: Partial<SineOptions> = {}, seed: Seed = 1): StreamGenerator {
  const { curve, reversed, noise } = { ...SINE_DEFAULTS, ...options };
  oneOf(OWNER, 'curve', curve, ['sine1', 'sine2'] as const);
  if (typeof reversed !== 'boolean') {
    throw new ShoalError(
      'invalid-parameter',
      `${OWNER}: reversed must be true or false, got ${String(reversed)}`,
    );
  }
  closedUnit(OWNER, 'noise', noise);
  const under = reversed ? 0 : 1;
  let rng = new Rng(seed);
  const boundary = curve === 'sine1' ? Math.sin : (x: number) => 0.5 + 0.3 * Math.sin(3 * Math.PI * x);
  return {
    name: OWNER,
    schema: { features: [numeric('x'), numeric('y')] },
    classes: ['0', '1'],
    next(row, offset) {
      const x = rng.next();
      const y = rng.next();
      row[offset] = x;
      row[offset + 1] = y;
      return noisyLabel(rng, noise, y < boundary(x) ? under : 1 - under, 2);
    },
    snapshot: (): GeneratorSnapshot => generatorSnapshot(OWNER, { rng: rng.state() }),
    restore(snapshot) {
      const state = generatorState(snapshot, OWNER);
      rng = Rng.fromState(state.rng);
    },
  };
}
