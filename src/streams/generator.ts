import { checkSnapshot, type FeatureSchema, type RngState, type Snapshot } from '../core/index.js';

/**
 * The contract of a seeded stream generator: each call writes the next row in place and returns its
 * class label. Same seed, same rows, bit for bit; the state can be taken and resumed.
 *
 * @example
 * const gen = sea({ threshold: 8, noise: 0.1 }, 7);
 * const row = new Float64Array(gen.schema.features.length);
 * const label = gen.next(row, 0);
 */
export interface StreamGenerator {
  /** Generator name, as on the `synth` command line. */
  readonly name: string;
  readonly schema: FeatureSchema;
  /** Class names, index = label code. */
  readonly classes: readonly string[];
  /** Write the next row at row[offset …] and return its label. */
  next(row: Float64Array, offset: number): number;
  /** The generator's state in the snapshot envelope, JSON-safe, for checkpoints. */
  snapshot(): GeneratorSnapshot;
  /** Resume from a snapshot taken with `snapshot()` on a generator built with the same options. */
  restore(snapshot: GeneratorSnapshot): void;
}

export interface GeneratorState {
  readonly rng: RngState;
  /** Any further fields a generator needs (a drifting hyperplane's weights, moving centroids, …). */
  readonly extra?: unknown;
}

export type GeneratorSnapshot = Snapshot<GeneratorState>;

const VERSION = 1;

/** Wrap a generator's state in the snapshot envelope; `kind` names the generator. */
export function generatorSnapshot(kind: string, state: GeneratorState): GeneratorSnapshot {
  return { kind, version: VERSION, state };
}

/** The state inside a generator's snapshot, once its kind and version are checked. */
export function generatorState(snapshot: GeneratorSnapshot, kind: string): GeneratorState {
  checkSnapshot(snapshot, kind, VERSION);
  return snapshot.state;
}

/** A block of generated rows: row-major features and their labels. */
export interface GeneratedBlock {
  readonly width: number;
  readonly rows: Float64Array;
  readonly labels: Int32Array;
}

/** Draw `count` rows from `generator` into one block. */
export function take(generator: StreamGenerator, count: number): GeneratedBlock {
  const width = generator.schema.features.length;
  const rows = new Float64Array(count * width);
  const labels = new Int32Array(count);
  for (let i = 0; i < count; i++) labels[i] = generator.next(rows, i * width);
  return { width, rows, labels };
}
