import {
  closedUnit,
  encodeF64,
  integerAtLeast,
  nonNegative,
  numericSchema,
  Rng,
  type Seed,
} from '../core/index.js';
import { integerIn, stateArray, stateExtra, stateInteger } from './checks.js';
import {
  type GeneratorSnapshot,
  generatorSnapshot,
  generatorState,
  type StreamGenerator,
} from './generator.js';
import { noisyLabel } from './label-noise.js';

/**
 * Rotating hyperplane — Hulten, Spencer & Domingos, "Mining time-changing data streams", KDD 2001
 * (from memory, PUBLISHED.md [memory]): x uniform on [0, 1]^d, label 1 iff Σ wᵢxᵢ ≥ w₀ with
 * w₀ = ½ Σ wᵢ, so the hyperplane always cuts the cube through its centre and the classes stay balanced.
 * Weights start U(0, 1). Drift: every `period` rows each of the first `drifting` weights moves by
 * dᵢ·`magnitude`, and each direction dᵢ ∈ {−1, +1} (random at the start) reverses with probability
 * `reversal` (0.1 in the paper); `noise` flips a share of labels (5% is usual).
 *
 * @example
 * const gen = hyperplane({ features: 10, drifting: 2, magnitude: 0.001 }, 7);
 */
export interface HyperplaneOptions {
  /** d, the number of features. */
  readonly features: number;
  /** How many weights drift (the first ones). */
  readonly drifting: number;
  /** Step of a drifting weight per move; 0 = a fixed hyperplane. */
  readonly magnitude: number;
  /** Probability that a drifting weight's direction reverses at a move. */
  readonly reversal: number;
  /** Rows between moves (1 = the weights move after every row). */
  readonly period: number;
  readonly noise: number;
}

export const HYPERPLANE_DEFAULTS: HyperplaneOptions = {
  features: 10,
  drifting: 2,
  magnitude: 0.001,
  reversal: 0.1,
  period: 1,
  noise: 0.05,
};

const OWNER = 'hyperplane';

export function hyperplane(options: Partial<HyperplaneOptions> = {}, seed: Seed = 1): StreamGenerator {
  const { features, drifting, magnitude, reversal, period, noise } = { ...HYPERPLANE_DEFAULTS, ...options };
  integerAtLeast(OWNER, 'features', features);
  integerIn(OWNER, 'drifting', drifting, 0, features);
  nonNegative(OWNER, 'magnitude', magnitude);
  closedUnit(OWNER, 'reversal', reversal);
  integerAtLeast(OWNER, 'period', period);
  closedUnit(OWNER, 'noise', noise);
  let rng = new Rng(seed);
  let weights: Float64Array = new Float64Array(features);
  let directions: Float64Array = new Float64Array(drifting);
  for (let i = 0; i < features; i++) weights[i] = rng.next();
  for (let i = 0; i < drifting; i++) directions[i] = rng.next() < 0.5 ? -1 : 1;
  const moves = drifting > 0 && magnitude > 0;
  let clock = 0;
  return {
    name: OWNER,
    schema: numericSchema(features),
    classes: ['0', '1'],
    next(row, offset) {
      let dot = 0;
      let total = 0;
      for (let i = 0; i < features; i++) {
        const x = rng.next();
        const w = weights[i]!;
        row[offset + i] = x;
        dot += w * x;
        total += w;
      }
      const label = noisyLabel(rng, noise, dot >= 0.5 * total ? 1 : 0, 2);
      if (moves && ++clock === period) {
        clock = 0;
        for (let i = 0; i < drifting; i++) {
          weights[i]! += directions[i]! * magnitude;
          if (rng.next() < reversal) directions[i] = -directions[i]!;
        }
      }
      return label;
    },
    snapshot: (): GeneratorSnapshot =>
      generatorSnapshot(OWNER, {
        rng: rng.state(),
        extra: { weights: encodeF64(weights), directions: encodeF64(directions), clock },
      }),
    restore(snapshot) {
      const state = generatorState(snapshot, OWNER);
      const extra = stateExtra(OWNER, state);
      const w = stateArray(OWNER, extra, 'weights', features);
      const d = stateArray(OWNER, extra, 'directions', drifting);
      const c = stateInteger(OWNER, extra, 'clock', 0, period - 1);
      rng = Rng.fromState(state.rng);
      weights = w;
      directions = d;
      clock = c;
    },
  };
}
