import {
  type FeatureSchema,
  integerAtLeast,
  nonNegative,
  Rng,
  type Seed,
  ShoalError,
  sigmoid,
} from '../core/index.js';
import { stateExtra, stateInteger } from './checks.js';
import {
  type GeneratorSnapshot,
  generatorSnapshot,
  generatorState,
  type StreamGenerator,
} from './generator.js';

/**
 * A concept schedule: concepts (generators on one schema and one set of classes) take turns, a new one
 * every `every` rows, in the order `sequence` names them; a name may come back (a, b, a, c), and a
 * returning concept resumes its own generator where it left off.
 *
 * Change k starts at row t_k = k · every. With `width` W > 0 the change is the sigmoid join of Bifet et
 * al., "New ensemble methods for evolving data streams", KDD 2009 (from memory, PUBLISHED.md
 * [memory]): row t comes from the new concept with probability 1 / (1 + e^(−4(t − t_k)/W)), otherwise
 * from the stream before the change, the nested composition (((a ⊕ b) ⊕ a) ⊕ c). With W = 0 the
 * change is abrupt: row t_k is the first row of the new concept. Beyond ±10 W of a change point the
 * probability is within e^−40 ≈ 4e-18 of 0 or 1, below the resolution of a uniform draw, and is taken as
 * exact, so a row costs at most one draw per change point whose window it lies in.
 *
 * @example
 * const concepts = [
 *   { name: '8', generator: sea({ threshold: 8 }, 'a') },
 *   { name: '9', generator: sea({ threshold: 9 }, 'b') },
 * ];
 * const s = conceptSchedule({ concepts, sequence: ['8', '9', '8'], every: 25_000, width: 1_000 }, 7);
 * s.changePoints; // [25000, 50000]
 */
export interface ScheduledConcept {
  readonly name: string;
  readonly generator: StreamGenerator;
}

export interface ScheduleOptions {
  /** The distinct concepts, each with its own generator. */
  readonly concepts: readonly ScheduledConcept[];
  /** Concept names in the order they take turns; names may recur. */
  readonly sequence: readonly string[];
  /** Rows per turn; needed when the sequence has more than one entry. */
  readonly every?: number;
  /** Width W of each sigmoid change in rows; 0 (the default) = abrupt. */
  readonly width?: number;
}

export interface ConceptSchedule extends StreamGenerator {
  /** Row index t_k of each change (the first row of the new concept when abrupt, the midpoint when not). */
  readonly changePoints: readonly number[];
  readonly sequence: readonly string[];
  readonly width: number;
  /** Position in `sequence` of the concept that wrote the last row; −1 before the first row. */
  readonly lastTurn: number;
  /** Rows written so far. */
  readonly rows: number;
}

/** Reach of a sigmoid change, in widths: beyond it the join probability is 0 or 1 to double precision. */
const REACH = 10;

/**
 * Probability that row t comes from the concept that starts at t₀ (Bifet et al., KDD 2009):
 * 1 / (1 + e^(−4(t − t₀)/W)); with W = 0, 1 from t₀ on and 0 before.
 */
export function newConceptShare(t: number, t0: number, width: number): number {
  if (width === 0) return t >= t0 ? 1 : 0;
  return sigmoid((4 * (t - t0)) / width);
}

function sameSchema(a: FeatureSchema, b: FeatureSchema): boolean {
  return (
    a.features.length === b.features.length &&
    a.features.every((f, i) => {
      const g = b.features[i]!;
      return f.name === g.name && f.kind === g.kind && f.values === g.values;
    })
  );
}

const OWNER = 'concept schedule';

export function conceptSchedule(options: ScheduleOptions, seed: Seed): ConceptSchedule {
  const { concepts, sequence } = options;
  const width = nonNegative(OWNER, 'width', options.width ?? 0);
  if (!Array.isArray(concepts) || concepts.length === 0) {
    throw new ShoalError('invalid-parameter', `${OWNER}: concepts must list at least one concept`);
  }
  if (!Array.isArray(sequence) || sequence.length === 0) {
    throw new ShoalError('invalid-parameter', `${OWNER}: sequence must name at least one concept`);
  }
  const first = concepts[0]!.generator;
  const index = new Map<string, number>();
  concepts.forEach((c, i) => {
    if (index.has(c.name)) {
      throw new ShoalError('invalid-parameter', `${OWNER}: concepts[${i}]: '${c.name}' is listed twice`);
    }
    const g = c.generator;
    if (!sameSchema(g.schema, first.schema) || g.classes.join('\u0000') !== first.classes.join('\u0000')) {
      throw new ShoalError(
        'invalid-parameter',
        `${OWNER}: concepts[${i}]: '${c.name}' has another schema or other classes than '${concepts[0]!.name}'`,
      );
    }
    index.set(c.name, i);
  });
  const turns = Int32Array.from(sequence, (name, k) => {
    const i = index.get(name);
    if (i === undefined) {
      throw new ShoalError('invalid-parameter', `${OWNER}: sequence[${k}]: unknown concept '${name}'`);
    }
    return i;
  });
  const last = turns.length - 1;
  let every = 0;
  if (last > 0) {
    if (options.every === undefined) {
      throw new ShoalError(
        'invalid-parameter',
        `${OWNER}: every is needed when the sequence has several turns`,
      );
    }
    every = integerAtLeast(OWNER, 'every', options.every);
  }
  const generators = concepts.map((c) => c.generator);
  const changePoints = Array.from({ length: last }, (_, k) => (k + 1) * every);
  const reach = REACH * width;
  const scale = width > 0 ? 4 / width : 0;
  let rng = new Rng(seed);
  let row = 0;
  let lastTurn = -1;

  /** The turn that writes row t: the latest change whose draw says "new", else turn 0. */
  const turnAt = (t: number): number => {
    if (last === 0) return 0;
    if (width === 0) return Math.min(last, Math.floor(t / every));
    for (let k = Math.min(last, Math.floor((t + reach) / every)); k >= 1; k--) {
      const since = t - k * every;
      if (since >= reach || rng.next() < sigmoid(since * scale)) return k;
    }
    return 0;
  };

  return {
    name: [...new Set(generators.map((g) => g.name))].join('+'),
    schema: first.schema,
    classes: first.classes,
    changePoints,
    sequence: [...sequence],
    width,
    get lastTurn() {
      return lastTurn;
    },
    get rows() {
      return row;
    },
    next(out, offset) {
      lastTurn = turnAt(row);
      row++;
      return generators[turns[lastTurn]!]!.next(out, offset);
    },
    snapshot: (): GeneratorSnapshot =>
      generatorSnapshot(OWNER, {
        rng: rng.state(),
        extra: { row, lastTurn, concepts: generators.map((g) => g.snapshot()) },
      }),
    restore(snapshot) {
      const state = generatorState(snapshot, OWNER);
      const extra = stateExtra(OWNER, state);
      const rows = stateInteger(OWNER, extra, 'row', 0, Number.MAX_SAFE_INTEGER);
      const turn = stateInteger(OWNER, extra, 'lastTurn', rows === 0 ? -1 : 0, rows === 0 ? -1 : last);
      const states = extra.concepts;
      if (!Array.isArray(states) || states.length !== generators.length) {
        throw new ShoalError(
          'invalid-snapshot',
          `${OWNER} state: concepts must hold ${generators.length} generator states`,
        );
      }
      const resumed = Rng.fromState(state.rng);
      // All or nothing: if one concept refuses its state, put back the states the others had.
      const before = generators.map((g) => g.snapshot());
      try {
        for (let i = 0; i < generators.length; i++) generators[i]!.restore(states[i] as GeneratorSnapshot);
      } catch (e) {
        for (let i = 0; i < generators.length; i++) generators[i]!.restore(before[i]!);
        throw e;
      }
      rng = resumed;
      row = rows;
      lastTurn = turn;
    },
  };
}
