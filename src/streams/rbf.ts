import {
  closedUnit,
  encodeF64,
  integerAtLeast,
  numericSchema,
  Rng,
  type Seed,
  ShoalError,
} from '../core/index.js';
import { integerIn, numberIn, stateArray, stateExtra, stateInteger } from './checks.js';
import {
  type GeneratorSnapshot,
  generatorSnapshot,
  generatorState,
  type StreamGenerator,
} from './generator.js';
import { noisyLabel } from './label-noise.js';

/**
 * Random RBF with moving centroids — Kirkby's thesis (2007), as used by Bifet et al., "New ensemble
 * methods for evolving data streams", KDD 2009 (from memory, PUBLISHED.md [memory]).
 *
 * `centroids` centres are drawn uniform in [0, 1]^d, each with a class (uniform), a weight U(0, 1) and a
 * spread U(0, 1). A row picks a centroid with probability proportional to its weight and lies at a
 * Gaussian distance (standard deviation = the centroid's spread) from its centre in a uniformly random
 * direction; its label is the centroid's class. Drift: the first `drifting` centroids (all by default)
 * each move `speed` per row along a random direction, reflecting off the faces of the unit cube (the
 * reflection is computed in closed form, so a row costs O(d) however many centroids move).
 * `noise` replaces a share of labels by another class.
 *
 * @example
 * const gen = rbf({ features: 10, classes: 2, centroids: 50, speed: 0.0001 }, 7);
 */
export interface RbfOptions {
  readonly features: number;
  readonly classes: number;
  readonly centroids: number;
  /** How many centroids move (the first ones); every centroid when left out. */
  readonly drifting?: number;
  /** Distance a moving centroid travels per row, in [0, 1]; 0 = no drift. */
  readonly speed: number;
  readonly noise: number;
}

export const RBF_DEFAULTS: RbfOptions = { features: 10, classes: 2, centroids: 50, speed: 0, noise: 0 };

const OWNER = 'rbf';

/** Write a uniformly random unit vector of length `n` at v[o …] (normalised Gaussian draws). */
function randomDirection(rng: Rng, v: Float64Array, o: number, n: number): void {
  let norm: number;
  do {
    norm = 0;
    for (let j = 0; j < n; j++) {
      const z = rng.normal();
      v[o + j] = z;
      norm += z * z;
    }
  } while (norm === 0);
  const inv = 1 / Math.sqrt(norm);
  for (let j = 0; j < n; j++) v[o + j]! *= inv;
}

/**
 * Where a point moving at constant speed and reflecting off 0 and 1 is, given where it would be
 * without walls (`y`): the triangle wave of period 2. Closed form, so a row only computes the
 * position of the centroid it uses.
 */
function reflect(y: number): number {
  const r = y - 2 * Math.floor(y / 2);
  return r <= 1 ? r : 2 - r;
}

export function rbf(options: Partial<RbfOptions> = {}, seed: Seed = 1): StreamGenerator {
  const merged = { ...RBF_DEFAULTS, ...options };
  const { features: d, classes, centroids: m, speed, noise } = merged;
  integerAtLeast(OWNER, 'features', d);
  integerAtLeast(OWNER, 'classes', classes, 2);
  integerAtLeast(OWNER, 'centroids', m);
  const drifting = integerIn(OWNER, 'drifting', merged.drifting ?? m, 0, m);
  numberIn(OWNER, 'speed', speed, 0, 1);
  closedUnit(OWNER, 'noise', noise);
  let rng = new Rng(seed);
  let origins: Float64Array = new Float64Array(m * d);
  let velocities: Float64Array = new Float64Array(m * d);
  let labels: Float64Array = new Float64Array(m);
  let spreads: Float64Array = new Float64Array(m);
  let weights: Float64Array = new Float64Array(m);
  const cumulative = new Float64Array(m);
  const direction = new Float64Array(d);
  for (let c = 0; c < m; c++) {
    for (let j = 0; j < d; j++) origins[c * d + j] = rng.next();
    labels[c] = rng.int(classes);
    weights[c] = rng.next();
    spreads[c] = rng.next();
  }
  if (speed > 0) {
    for (let c = 0; c < drifting; c++) {
      randomDirection(rng, velocities, c * d, d);
      for (let j = 0; j < d; j++) velocities[c * d + j]! *= speed;
    }
  }
  const accumulate = (): void => {
    let sum = 0;
    for (let c = 0; c < m; c++) {
      sum += weights[c]!;
      cumulative[c] = sum;
    }
  };
  accumulate();
  /** Rows written so far: centroid coordinate i sits at reflect(origin + velocity · clock). */
  let clock = 0;
  return {
    name: OWNER,
    schema: numericSchema(d),
    classes: Array.from({ length: classes }, (_, k) => String(k)),
    next(row, offset) {
      const pick = rng.next() * cumulative[m - 1]!;
      let c = 0;
      while (c < m - 1 && cumulative[c]! <= pick) c++;
      randomDirection(rng, direction, 0, d);
      const distance = rng.normal() * spreads[c]!;
      const base = c * d;
      for (let j = 0; j < d; j++) {
        const centre = reflect(origins[base + j]! + velocities[base + j]! * clock);
        row[offset + j] = centre + direction[j]! * distance;
      }
      clock++;
      return noisyLabel(rng, noise, labels[c]!, classes);
    },
    snapshot: (): GeneratorSnapshot =>
      generatorSnapshot(OWNER, {
        rng: rng.state(),
        extra: {
          clock,
          origins: encodeF64(origins),
          velocities: encodeF64(velocities),
          labels: encodeF64(labels),
          spreads: encodeF64(spreads),
          weights: encodeF64(weights),
        },
      }),
    restore(snapshot) {
      const state = generatorState(snapshot, OWNER);
      const extra = stateExtra(OWNER, state);
      const next = {
        clock: stateInteger(OWNER, extra, 'clock', 0, Number.MAX_SAFE_INTEGER),
        origins: stateArray(OWNER, extra, 'origins', m * d),
        velocities: stateArray(OWNER, extra, 'velocities', m * d),
        labels: stateArray(OWNER, extra, 'labels', m),
        spreads: stateArray(OWNER, extra, 'spreads', m),
        weights: stateArray(OWNER, extra, 'weights', m),
      };
      for (let c = 0; c < m; c++) {
        const k = next.labels[c]!;
        if (!(Number.isInteger(k) && k >= 0 && k < classes) || !(next.weights[c]! >= 0)) {
          throw new ShoalError('invalid-snapshot', `${OWNER} state: centroid ${c} has a bad class or weight`);
        }
      }
      rng = Rng.fromState(state.rng);
      ({ clock, origins, velocities, labels, spreads, weights } = next);
      accumulate();
    },
  };
}
