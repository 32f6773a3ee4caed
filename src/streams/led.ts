import { closedUnit, integerAtLeast, nominal, Rng, type Seed } from '../core/index.js';
import { integerIn } from './checks.js';
import {
  type GeneratorSnapshot,
  generatorSnapshot,
  generatorState,
  type StreamGenerator,
} from './generator.js';

/**
 * LED display — Breiman, Friedman, Olshen & Stone, Classification and Regression Trees, 1984,
 * pp. 43–49: a digit 0–9 chosen uniformly is shown on seven segments, each segment inverted with
 * probability `noise` (0.1 in the book); `irrelevant` further binary attributes are uniform noise
 * (17 in the common 24-attribute form). Bayes accuracy at 10% noise: 74%.
 *
 * Drift (ours, after the drifting LED stream of Bifet et al., KDD 2009, from memory): with
 * `drifting` = k, segment i < k is written to the column of irrelevant attribute i and that attribute
 * to column i, so a concept change moves k relevant attributes to where noise used to be. The draws
 * are the same for every k, and k = 0 is the book's stream.
 */
export interface LedOptions {
  readonly noise: number;
  readonly irrelevant: number;
  /** Segments swapped with irrelevant attributes (0 … 7, at most `irrelevant`). */
  readonly drifting: number;
}

export const LED_DEFAULTS: LedOptions = { noise: 0.1, irrelevant: 17, drifting: 0 };

/**
 * Segments lit per digit, in the order top, upper-left, upper-right, middle, lower-left, lower-right,
 * bottom (the usual seven-segment layout).
 */
export const LED_SEGMENTS: readonly (readonly number[])[] = [
  [1, 1, 1, 0, 1, 1, 1],
  [0, 0, 1, 0, 0, 1, 0],
  [1, 0, 1, 1, 1, 0, 1],
  [1, 0, 1, 1, 0, 1, 1],
  [0, 1, 1, 1, 0, 1, 0],
  [1, 1, 0, 1, 0, 1, 1],
  [1, 1, 0, 1, 1, 1, 1],
  [1, 0, 1, 0, 0, 1, 0],
  [1, 1, 1, 1, 1, 1, 1],
  [1, 1, 1, 1, 0, 1, 1],
];

/**
 * The column each drawn value goes to: values 0–6 are the segments, 7… the irrelevant attributes.
 * Exported so that a reader (a test's Bayes decoder) finds the segments of a drifted stream.
 */
export function ledColumns(irrelevant: number, drifting: number): Int32Array {
  const columns = Int32Array.from({ length: 7 + irrelevant }, (_, i) => i);
  for (let i = 0; i < drifting; i++) {
    columns[i] = 7 + i;
    columns[7 + i] = i;
  }
  return columns;
}

export function led(options: Partial<LedOptions> = {}, seed: Seed = 1): StreamGenerator {
  const { noise, irrelevant, drifting } = { ...LED_DEFAULTS, ...options };
  closedUnit('led', 'noise', noise);
  integerAtLeast('led', 'irrelevant', irrelevant, 0);
  integerIn('led', 'drifting', drifting, 0, Math.min(7, irrelevant));
  const columns = ledColumns(irrelevant, drifting);
  let rng = new Rng(seed);
  const features = [
    ...Array.from({ length: 7 }, (_, i) => nominal(`segment${i + 1}`, ['off', 'on'])),
    ...Array.from({ length: irrelevant }, (_, i) => nominal(`noise${i + 1}`, ['off', 'on'])),
  ];
  return {
    name: 'led',
    schema: { features },
    classes: ['0', '1', '2', '3', '4', '5', '6', '7', '8', '9'],
    next(row, offset) {
      const digit = rng.int(10);
      const lit = LED_SEGMENTS[digit]!;
      for (let s = 0; s < 7; s++) row[offset + columns[s]!] = rng.next() < noise ? 1 - lit[s]! : lit[s]!;
      for (let s = 7; s < 7 + irrelevant; s++) row[offset + columns[s]!] = rng.next() < 0.5 ? 1 : 0;
      return digit;
    },
    snapshot: (): GeneratorSnapshot => generatorSnapshot('led', { rng: rng.state() }),
    restore(snapshot) {
      const state = generatorState(snapshot, 'led');
      rng = Rng.fromState(state.rng);
    },
  };
}
