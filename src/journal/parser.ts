import {
  type ChangePoints,
  type Feature,
  type FeatureSchema,
  readChangePoints,
  ShoalError,
} from '../core/index.js';
import { Fields, isObject, show } from './fields.js';
import {
  INPUT_DRIFT_CAUSES,
  type InputDriftRecord,
  JOURNAL_VERSION,
  type JournalRecord,
  type LabelCounts,
  LIFECYCLE_CAUSES,
  type LifecycleRecord,
  MEMBER_STATES,
  type ProofRecord,
  type RunRecord,
  type SummaryRecord,
  TASKS,
  type ViewFigures,
  type WindowRecord,
} from './records.js';

const KINDS = ['numeric', 'nominal'] as const;
/** Seats a journal may name: far beyond any ensemble, and a guard against a corrupt number drawing a billion lanes. */
const MOST_SEATS = 65_536;

/**
 * Read a journal: NDJSON text, one record per line (see `records.ts`). Each line is checked field by
 * field; the first bad line throws a `ShoalError` with code `invalid-input` whose message names the
 * source, the line and the field (`run.ndjson:7: window record: scored must be an integer ≥ 0, got -3`).
 *
 * Compatibility rules:
 * - blank lines (a trailing newline, CRLF endings) are skipped;
 * - a line whose `type` is a string this reader does not know is skipped, so a report can read a
 *   journal from a newer Shoal that added a kind of record; a change that alters an existing record
 *   raises `RunRecord.version`, and a version other than `JOURNAL_VERSION` is refused;
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
    ...(f.raw('changes') === undefined ? {} : { changes: readChanges(f) }),
  };
}

function readChanges(f: Fields): ChangePoints {
  const changes = readChangePoints(f.raw('changes'));
  return typeof changes === 'string'
    ? f.fail('changes', `the stream's change points (${changes})`, f.raw('changes'))
    : changes;
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
    scored: f.integer('scored', 0),
    trained: f.integer('trained', 0),
    seat: f.integer('seat', 0, MOST_SEATS - 1),
    member: f.integer('member', 0),
    learner: f.string('learner'),
    from: f.raw('from') === null ? null : f.oneOf('from', MEMBER_STATES),
    to: f.oneOf('to', MEMBER_STATES),
    cause: f.oneOf('cause', LIFECYCLE_CAUSES),
    detector: f.string('detector'),
    estimate: f.numberOrNaN('estimate'),
    reason: f.string('reason'),
    ...(f.raw('proof') === undefined ? {} : { proof: readProof(f.object('proof')) }),
  };
}

function readProof(f: Fields): ProofRecord {
  return {
    rows: f.integer('rows', 0),
    gains: f.integer('gains', 0),
    losses: f.integer('losses', 0),
    margin: f.atLeastZero('margin'),
    delta: f.atLeastZero('delta'),
  };
}

function readView(f: Fields): ViewFigures {
  return {
    rows: f.atLeastZero('rows'),
    accuracy: f.numberOrNull('accuracy'),
    kappa: f.numberOrNull('kappa'),
    kappaM: f.numberOrNull('kappaM'),
    kappaNoChange: f.numberOrNull('kappaNoChange'),
    logLoss: f.numberOrNull('logLoss'),
    mae: f.numberOrNull('mae'),
    rmse: f.numberOrNull('rmse'),
    r2: f.numberOrNull('r2'),
  };
}

function readLabels(f: Fields): LabelCounts {
  return {
    inline: f.integer('inline', 0),
    joined: f.integer('joined', 0),
    duplicate: f.integer('duplicate', 0),
    late: f.integer('late', 0),
    evicted: f.integer('evicted', 0),
    unknown: f.integer('unknown', 0),
    early: f.integer('early', 0),
    held: f.integer('held', 0),
    trainedUnmatched: f.integer('trainedUnmatched', 0),
    expiredPredictions: f.integer('expiredPredictions', 0),
    evictedPredictions: f.integer('evictedPredictions', 0),
    pending: f.integer('pending', 0),
  };
}

function readWindow(f: Fields): WindowRecord {
  return {
    type: 'window',
    scored: f.integer('scored', 0),
    trained: f.integer('trained', 0),
    window: readView(f.object('window')),
    cumulative: readView(f.object('cumulative')),
    seats: f.numbersOrNaN('seats'),
    labels: readLabels(f.object('labels')),
  };
}

function readInputDrift(f: Fields): InputDriftRecord {
  return {
    type: 'input-drift',
    scored: f.integer('scored', 0),
    trained: f.integer('trained', 0),
    feature: f.string('feature'),
    kind: f.oneOf('kind', KINDS),
    cause: f.oneOf('cause', INPUT_DRIFT_CAUSES),
  };
}

function readSummary(f: Fields): SummaryRecord {
  const classes = f.strings('classes');
  const confusion = f.matrix('confusion');
  return {
    type: 'summary',
    task: f.oneOf('task', TASKS),
    scored: f.integer('scored', 0),
    trained: f.integer('trained', 0),
    rows: f.integer('rows', 0),
    accuracy: f.numberOrNull('accuracy'),
    kappa: f.numberOrNull('kappa'),
    kappaM: f.numberOrNull('kappaM'),
    kappaNoChange: f.numberOrNull('kappaNoChange'),
    logLoss: f.numberOrNull('logLoss'),
    macroF1: f.numberOrNull('macroF1'),
    mae: f.numberOrNull('mae'),
    rmse: f.numberOrNull('rmse'),
    r2: f.numberOrNull('r2'),
    classes,
    confusion,
    driftSignals: f.integer('driftSignals', 0),
    warnings: f.integer('warnings', 0),
    replacements: f.integer('replacements', 0),
    inputDrifts: f.integer('inputDrifts', 0),
    labels: readLabels(f.object('labels')),
    seconds: f.atLeastZero('seconds'),
    rowsPerSecond: f.atLeastZero('rowsPerSecond'),
  };
}
