import { ConfigError, type ConfigIssue, deriveSeed, type Seed, ShoalError } from '../core/index.js';
import { STREAM_NAMES, STREAMS, type StreamName } from './registry.js';
import { type ConceptSchedule, conceptSchedule, type ScheduledConcept } from './schedule.js';

/**
 * A stream as a user asks for it, on the command line or in `shoal.yaml`:
 * `shoal spawn sea --concepts 8,9,7,9.5 --every 25000 --width 0 --noise 0.1`.
 */
export interface StreamRequest {
  /** A generator name (see `STREAM_NAMES`). */
  readonly generator: string;
  /** Concept names in order, recurring allowed: a comma-separated string or a list. Default: one concept. */
  readonly concepts?: string | readonly (string | number)[];
  /** Rows per concept; needed with more than one concept. */
  readonly every?: number;
  /** Width of each sigmoid change in rows; 0 (default) = abrupt. */
  readonly width?: number;
  /** The generator's noise parameter (see `StreamSpec.noiseMeaning`); default: the generator's own. */
  readonly noise?: number;
  readonly seed: Seed;
  /** Generator-specific settings (see `StreamSpec.optionNames`). */
  readonly options?: Readonly<Record<string, unknown>>;
}

const SOURCE = 'stream';

function show(value: unknown): string {
  return typeof value === 'string' ? `'${value}'` : String(value);
}

function isRecord(value: unknown): value is Readonly<Record<string, unknown>> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

/**
 * Check a stream request and build it: one generator per distinct concept, each seeded with
 * `deriveSeed(seed, 'concept', name)` so that a concept's rows do not depend on the others, joined by a
 * concept schedule seeded with `deriveSeed(seed, 'schedule')`. Every bad field is reported at once in
 * a `ConfigError` whose issues name it (`concepts[2]: unknown SEA threshold 'x' …`).
 *
 * @example
 * const stream = buildStream({ generator: 'sea', concepts: '8,9,7,9.5', every: 25_000, seed: 7 });
 * stream.changePoints; // [25000, 50000, 75000]
 */
export function buildStream(request: StreamRequest): ConceptSchedule {
  const issues: ConfigIssue[] = [];
  const problem = (path: string, message: string): void => {
    issues.push({ path, code: message.startsWith('unknown') ? 'not-one-of' : 'wrong-type', message });
  };
  const { generator, every, width, noise, seed } = request;
  if (!(typeof seed === 'string' || (typeof seed === 'number' && Number.isFinite(seed)))) {
    problem('seed', `expected a number or a string, got ${show(seed)}`);
  }
  if (!(STREAM_NAMES as readonly string[]).includes(generator)) {
    problem('generator', `unknown generator ${show(generator)} (expected one of ${STREAM_NAMES.join(', ')})`);
    throw new ConfigError(SOURCE, issues);
  }
  const spec = STREAMS[generator as StreamName];

  const raw = request.concepts ?? [spec.defaultConcept];
  const tokens = typeof raw === 'string' ? raw.split(',') : Array.isArray(raw) ? raw : undefined;
  const sequence: string[] = [];
  if (tokens === undefined || tokens.length === 0) {
    problem('concepts', `expected at least one ${spec.conceptKind} (${spec.conceptHint})`);
  } else {
    tokens.forEach((token, i) => {
      const name =
        typeof token === 'string' || typeof token === 'number'
          ? spec.canonical(String(token).trim())
          : undefined;
      if (name === undefined) {
        problem(
          `concepts[${i}]`,
          `unknown ${spec.conceptKind} ${show(token)} (expected ${spec.conceptHint})`,
        );
      } else {
        sequence.push(name);
      }
    });
  }
  if (every === undefined) {
    if (tokens !== undefined && tokens.length > 1) {
      problem('every', 'needed when more than one concept is listed');
    }
  } else if (!(Number.isInteger(every) && every >= 1)) {
    problem('every', `expected an integer ≥ 1 (rows per concept), got ${show(every)}`);
  }
  if (width !== undefined && !(typeof width === 'number' && width >= 0 && Number.isFinite(width))) {
    problem('width', `expected a finite number ≥ 0 (rows; 0 = abrupt), got ${show(width)}`);
  }
  if (noise !== undefined && !(typeof noise === 'number' && noise >= 0 && noise <= 1)) {
    problem('noise', `expected a number in [0, 1] (${spec.noiseMeaning}), got ${show(noise)}`);
  }
  const options: Record<string, number> = {};
  if (request.options !== undefined && !isRecord(request.options)) {
    problem('options', `expected an object of ${generator} settings`);
  } else {
    for (const [key, value] of Object.entries(request.options ?? {})) {
      if (!spec.optionNames.includes(key)) {
        const known =
          spec.optionNames.length > 0 ? `expected ${spec.optionNames.join(', ')}` : 'it takes none';
        problem(`options.${key}`, `not a setting of ${generator} (${known})`);
      } else if (typeof value !== 'number') {
        problem(`options.${key}`, `expected a number, got ${show(value)}`);
      } else {
        options[key] = value;
      }
    }
  }
  if (issues.length > 0) throw new ConfigError(SOURCE, issues);

  const concepts: ScheduledConcept[] = [];
  for (const name of new Set(sequence)) {
    const conceptSeed = deriveSeed(seed, 'concept', name);
    try {
      concepts.push({ name, generator: spec.build(name, noise, options, conceptSeed) });
    } catch (e) {
      if (!(e instanceof ShoalError && e.code === 'invalid-parameter')) throw e;
      // The generator's message reads "<generator>: <parameter> must be …"; blame the setting it names.
      const key = Object.keys(options).find((k) => e.message.includes(`: ${k} must`));
      if (key !== undefined) {
        problem(`options.${key}`, e.message);
        break;
      }
      problem(`concepts[${sequence.indexOf(name)}]`, e.message);
    }
  }
  if (issues.length > 0) throw new ConfigError(SOURCE, issues);
  return conceptSchedule(
    {
      concepts,
      sequence,
      ...(every === undefined ? {} : { every }),
      ...(width === undefined ? {} : { width }),
    },
    deriveSeed(seed, 'schedule'),
  );
}
