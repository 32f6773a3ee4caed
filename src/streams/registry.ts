import type { Seed } from '../core/index.js';
import { agrawal } from './agrawal.js';
import type { StreamGenerator } from './generator.js';
import { hyperplane } from './hyperplane.js';
import { led } from './led.js';
import { rbf } from './rbf.js';
import { sea } from './sea.js';
import { sine } from './sine.js';
import { stagger } from './stagger.js';

/**
 * What each generator calls a concept, as a user types it on the command line
 * (`shoal spawn sea --concepts 8,9,7,9.5 --every 25000`), and how to build one.
 */
export type StreamName = 'sea' | 'stagger' | 'led' | 'agrawal' | 'hyperplane' | 'rbf' | 'sine';

/** Generator-specific settings beyond concept and noise, all numeric (validated by the generator). */
export type StreamOptions = Readonly<Record<string, number>>;

export interface StreamSpec {
  readonly name: StreamName;
  /** What one concept is, for messages: `SEA threshold`. */
  readonly conceptKind: string;
  /** Which tokens are accepted, for messages and help. */
  readonly conceptHint: string;
  /** Concept names as typed on the command line (every one, or the paper's, for numeric kinds). */
  readonly conceptNames: readonly string[];
  readonly defaultConcept: string;
  /** What `noise` means for this generator. */
  readonly noiseMeaning: string;
  /** Names accepted in `options`. */
  readonly optionNames: readonly string[];
  /** The canonical name of a concept token, or undefined when the token names no concept. */
  canonical(token: string): string | undefined;
  /** Build the concept with a canonical name; `noise` undefined keeps the generator's default. */
  build(concept: string, noise: number | undefined, options: StreamOptions, seed: Seed): StreamGenerator;
}

const DECIMAL = /^(\d+\.?\d*|\.\d+)(e[+-]?\d+)?$/i;

/** A non-negative decimal token in [min, max], canonicalised through `Number`. */
function decimalIn(token: string, min: number, max: number): string | undefined {
  if (!DECIMAL.test(token)) return undefined;
  const value = Number(token);
  return value >= min && value <= max ? String(value) : undefined;
}

function listed(token: string, names: readonly string[]): string | undefined {
  return names.includes(token) ? token : undefined;
}

const withNoise = (noise: number | undefined): { noise?: number } => (noise === undefined ? {} : { noise });

const LABEL_FLIPS = 'share of labels flipped';
const STAGGER_NAMES = ['a', 'b', 'c'];
const AGRAWAL_NAMES = Array.from({ length: 10 }, (_, i) => String(i + 1));
const LED_NAMES = Array.from({ length: 8 }, (_, i) => String(i));
const SINE_NAMES = ['sine1', 'sine2', 'sine1-reversed', 'sine2-reversed'];

export const STREAMS: Readonly<Record<StreamName, StreamSpec>> = {
  sea: {
    name: 'sea',
    conceptKind: 'SEA threshold',
    conceptHint: "a number θ in [0, 20]; the paper's are 8, 9, 7, 9.5",
    conceptNames: ['8', '9', '7', '9.5'],
    defaultConcept: '8',
    noiseMeaning: LABEL_FLIPS,
    optionNames: [],
    canonical: (token) => decimalIn(token, 0, 20),
    build: (concept, noise, _options, seed) => sea({ threshold: Number(concept), ...withNoise(noise) }, seed),
  },
  stagger: {
    name: 'stagger',
    conceptKind: 'STAGGER concept',
    conceptHint: 'a, b or c',
    conceptNames: STAGGER_NAMES,
    defaultConcept: 'a',
    noiseMeaning: LABEL_FLIPS,
    optionNames: [],
    canonical: (token) => listed(token, STAGGER_NAMES),
    build: (concept, noise, _options, seed) =>
      stagger({ concept: concept as 'a' | 'b' | 'c', ...withNoise(noise) }, seed),
  },
  led: {
    name: 'led',
    conceptKind: 'LED drifting-segment count',
    conceptHint: 'an integer 0 … 7, the segments swapped with irrelevant attributes',
    conceptNames: LED_NAMES,
    defaultConcept: '0',
    noiseMeaning: 'probability that a segment is inverted',
    optionNames: ['irrelevant'],
    canonical: (token) => listed(token, LED_NAMES),
    build: (concept, noise, options, seed) =>
      led({ ...options, drifting: Number(concept), ...withNoise(noise) }, seed),
  },
  agrawal: {
    name: 'agrawal',
    conceptKind: 'Agrawal function',
    conceptHint: 'an integer 1 … 10',
    conceptNames: AGRAWAL_NAMES,
    defaultConcept: '1',
    noiseMeaning: LABEL_FLIPS,
    optionNames: ['perturbation'],
    canonical: (token) => listed(token, AGRAWAL_NAMES),
    build: (concept, noise, options, seed) =>
      agrawal({ ...options, fn: Number(concept), ...withNoise(noise) }, seed),
  },
  hyperplane: {
    name: 'hyperplane',
    conceptKind: 'hyperplane drift magnitude',
    conceptHint: 'a number ≥ 0, the step of each drifting weight (0 = a fixed hyperplane)',
    conceptNames: ['0', '0.001', '0.01'],
    defaultConcept: '0.001',
    noiseMeaning: LABEL_FLIPS,
    optionNames: ['features', 'drifting', 'reversal', 'period'],
    canonical: (token) => decimalIn(token, 0, Number.MAX_VALUE),
    build: (concept, noise, options, seed) =>
      hyperplane({ ...options, magnitude: Number(concept), ...withNoise(noise) }, seed),
  },
  rbf: {
    name: 'rbf',
    conceptKind: 'RBF centroid speed',
    conceptHint: 'a number in [0, 1], the distance a moving centroid travels per row (0 = no drift)',
    conceptNames: ['0', '0.0001', '0.001'],
    defaultConcept: '0',
    noiseMeaning: 'share of labels replaced by another class',
    optionNames: ['features', 'classes', 'centroids', 'drifting'],
    canonical: (token) => decimalIn(token, 0, 1),
    build: (concept, noise, options, seed) =>
      rbf({ ...options, speed: Number(concept), ...withNoise(noise) }, seed),
  },
  sine: {
    name: 'sine',
    conceptKind: 'sine concept',
    conceptHint: SINE_NAMES.join(', '),
    conceptNames: SINE_NAMES,
    defaultConcept: 'sine1',
    noiseMeaning: LABEL_FLIPS,
    optionNames: [],
    canonical: (token) => listed(token, SINE_NAMES),
    build: (concept, noise, _options, seed) =>
      sine(
        {
          curve: concept.startsWith('sine1') ? 'sine1' : 'sine2',
          reversed: concept.endsWith('-reversed'),
          ...withNoise(noise),
        },
        seed,
      ),
  },
};

export const STREAM_NAMES = Object.keys(STREAMS) as readonly StreamName[];
