import { type Feature, type FeatureSchema, ShoalError } from '../core/index.js';
import type { LifecycleRecord, MemberState } from '../ensembles/index.js';
import type {
  InputDriftRecord,
  JournalRecord,
  RunRecord,
  SummaryRecord,
  ViewFigures,
  WindowRecord,
} from '../pipeline/journal.js';

/** The journal format this reader understands (`RunRecord.version`). */
export const JOURNAL_VERSION = 1;

const STATES: readonly MemberState[] = ['warming', 'active', 'watched', 'retired'];
const KINDS = ['numeric', 'nominal'] as const;
/** Seats a journal may name: far beyond any ensemble, and a guard against a corrupt number drawing a billion lanes. */
const MOST_SEATS = 65_536;

/**
 * Read a journal: NDJSON text, one record per line (see `src/pipeline/journal.ts`). Each line is
 * checked field by field; the first bad line throws a `ShoalError` with code `invalid-input` whose
 * message names the source, the line and the field (`run.ndjson:7: window record: row must be an
 * integer ≥ 0, got -3`).
 *
 * Compatibility rules:
 * - blank lines (a trailing newline, CRLF endings) are skipped;
 * - a line whose `type` is a string this reader does not know is skipped, so a report can read a
 *   journal from a newer Shoal that added a kind of record; a change that alters an existing record
 *   raises `RunRecord.version`, and a version other than 1 is refused;
 * - fields a record carries beyond the ones it needs are dropped;
 * - JSON has no NaN, so a member's `estimate` or a seat's accuracy written as null reads as NaN.
 *
 * @example
 * const records = parseJournal(readFileSync('run.ndjson', 'utf8'), 'run.ndjson');
 */
export function parseJournal(text: string, source: string): JournalRecord[] {
  const records: JournalRecord[] = [];
  const lines = text.split('\n');
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i]!.trim();
    if (line === '') continue;
    const where = `${source}:${i + 1}`;
    let value: unknown;
    try {
      value = JSON.parse(line);
    } catch (e) {
      throw new ShoalError('invalid-input', `${where}: not a JSON value (${(e as Error).message})`, {
        cause: e,
      });
    }
    if (!isObject(value)) {
      throw new ShoalError('invalid-input', `${where}: expected a JSON object, got ${show(value)}`);
    }
    const type = value.type;
    if (typeof type !== 'string') {
      throw new ShoalError('invalid-input', `${where}: a record needs a string type, got ${show(type)}`);
    }
    const read = READERS[type];
    if (read !== undefined) records.push(read(new Fields(value, `${where}: ${type} record`)));
  }
  return records;
}

const READERS: Readonly<Record<string, (f: Fields) => JournalRecord>> = {
  run: readRun,
  lifecycle: readLifecycle,
  window: readWindow,
  'input-drift': readInputDrift,
  summary: readSummary,
};

function readRun(f: Fields): RunRecord {
  const version = f.integer('version', 1);
  if (version !== JOURNAL_VERSION) {
    f.fail('version', `${JOURNAL_VERSION} (the journal format this Shoal reads)`, version);
  }
  return {
    type: 'run',
    version: JOURNAL_VERSION,
    shoal: f.string('shoal'),
    startedAt: f.string('startedAt'),
    source: f.string('source'),
    config: f.object('config').value,
    schema: readSchema(f.object('schema')),
    seed: f.string('seed'),
  };
}

function readSchema(f: Fields): FeatureSchema {
  return {
    features: f.objects('features').map((g): Feature => {
      const name = g.string('name');
      const kind = g.oneOf('kind', KINDS);
      const values = g.integer('values', 0);
      const categories = g.optionalStrings('categories');
      return categories === undefined ? { name, kind, values } : { name, kind, values, categories };
    }),
  };
}

function readLifecycle(f: Fields): LifecycleRecord {
  return {
    type: 'lifecycle',
    row: f.integer('row', 0),
    seat: f.integer('seat', 0, MOST_SEATS - 1),
    member: f.integer('member', 0),
    from: f.raw('from') === null ? null : f.oneOf('from', STATES),
    to: f.oneOf('to', STATES),
    detector: f.string('detector'),
    estimate: f.numberOrNaN('estimate'),
    reason: f.string('reason'),
  };
}

function readView(f: Fields): ViewFigures {
  return {
    rows: f.atLeastZero('rows'),
    accuracy: f.numberOrNull('accuracy'),
    kappa: f.numberOrNull('kappa'),
    kappaM: f.numberOrNull('kappaM'),
    kappaTemporal: f.numberOrNull('kappaTemporal'),
    logLoss: f.numberOrNull('logLoss'),
  };
}

function readWindow(f: Fields): WindowRecord {
  return {
    type: 'window',
    row: f.integer('row', 0),
    window: readView(f.object('window')),
    cumulative: readView(f.object('cumulative')),
    seats: f.numbersOrNaN('seats'),
  };
}

function readInputDrift(f: Fields): InputDriftRecord {
  return {
    type: 'input-drift',
    row: f.integer('row', 0),
    feature: f.string('feature'),
    kind: f.oneOf('kind', KINDS),
  };
}

function readSummary(f: Fields): SummaryRecord {
  const classes = f.strings('classes');
  const confusion = f.matrix('confusion');
  return {
    type: 'summary',
    rows: f.integer('rows', 0),
    accuracy: f.numberOrNull('accuracy'),
    kappa: f.numberOrNull('kappa'),
    kappaM: f.numberOrNull('kappaM'),
    kappaTemporal: f.numberOrNull('kappaTemporal'),
    logLoss: f.numberOrNull('logLoss'),
    macroF1: f.numberOrNull('macroF1'),
    classes,
    confusion,
    driftSignals: f.integer('driftSignals', 0),
    warnings: f.integer('warnings', 0),
    replacements: f.integer('replacements', 0),
    inputDrifts: f.integer('inputDrifts', 0),
    seconds: f.atLeastZero('seconds'),
    rowsPerSecond: f.atLeastZero('rowsPerSecond'),
  };
}

function isObject(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

function show(value: unknown): string {
  const text = value === undefined ? 'nothing' : JSON.stringify(value);
  return text.length > 60 ? `${text.slice(0, 57)}...` : text;
}

/** The fields of one JSON object, read with checks; `what` locates it in messages. */
class Fields {
  readonly value: Record<string, unknown>;
  private readonly what: string;
  private readonly path: string;

  constructor(value: Record<string, unknown>, what: string, path = '') {
    this.value = value;
    this.what = what;
    this.path = path;
  }

  fail(key: string, expected: string, got: unknown): never {
    throw new ShoalError(
      'invalid-input',
      `${this.what}: ${this.path}${key} must be ${expected}, got ${show(got)}`,
    );
  }

  raw(key: string): unknown {
    return this.value[key];
  }

  string(key: string): string {
    const v = this.value[key];
    return typeof v === 'string' ? v : this.fail(key, 'a string', v);
  }

  integer(key: string, min: number, max = Number.MAX_SAFE_INTEGER): number {
    const v = this.value[key];
    if (typeof v === 'number' && Number.isInteger(v) && v >= min && v <= max) return v;
    return this.fail(
      key,
      max === Number.MAX_SAFE_INTEGER ? `an integer ≥ ${min}` : `an integer in [${min}, ${max}]`,
      v,
    );
  }

  atLeastZero(key: string): number {
    const v = this.value[key];
    return typeof v === 'number' && v >= 0 ? v : this.fail(key, 'a number ≥ 0', v);
  }

  numberOrNull(key: string): number | null {
    const v = this.value[key];
    return v === null || typeof v === 'number' ? v : this.fail(key, 'a number or null', v);
  }

  numberOrNaN(key: string): number {
    return this.numberOrNull(key) ?? Number.NaN;
  }

  oneOf<T extends string>(key: string, choices: readonly T[]): T {
    const v = this.value[key];
    return (choices as readonly unknown[]).includes(v)
      ? (v as T)
      : this.fail(key, `one of ${choices.join(', ')}`, v);
  }

  object(key: string): Fields {
    const v = this.value[key];
    return isObject(v) ? new Fields(v, this.what, `${this.path}${key}.`) : this.fail(key, 'an object', v);
  }

  private array(key: string): readonly unknown[] {
    const v = this.value[key];
    return Array.isArray(v) ? v : this.fail(key, 'an array', v);
  }

  objects(key: string): Fields[] {
    return this.array(key).map((v, i) =>
      isObject(v)
        ? new Fields(v, this.what, `${this.path}${key}[${i}].`)
        : this.fail(`${key}[${i}]`, 'an object', v),
    );
  }

  strings(key: string): string[] {
    return this.array(key).map((v, i) =>
      typeof v === 'string' ? v : this.fail(`${key}[${i}]`, 'a string', v),
    );
  }

  optionalStrings(key: string): string[] | undefined {
    return this.value[key] === undefined ? undefined : this.strings(key);
  }

  numbersOrNaN(key: string): number[] {
    return this.array(key).map((v, i) =>
      v === null ? Number.NaN : typeof v === 'number' ? v : this.fail(`${key}[${i}]`, 'a number or null', v),
    );
  }

  /** A square matrix of counts (numbers ≥ 0). */
  matrix(key: string): number[][] {
    const rows = this.array(key);
    return rows.map((row, r) => {
      if (!Array.isArray(row) || row.length !== rows.length) {
        this.fail(`${key}[${r}]`, `a row of ${rows.length} counts (a square matrix)`, row);
      }
      return row.map((v: unknown, c) =>
        typeof v === 'number' && v >= 0 ? v : this.fail(`${key}[${r}][${c}]`, 'a count ≥ 0', v),
      );
    });
  }
}
