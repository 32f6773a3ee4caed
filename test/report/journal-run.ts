import { readFileSync } from 'node:fs';
import { performance } from 'node:perf_hooks';
import { Bagging, Verdict } from '../../src/ensembles/index.js';
import { ClassificationEvaluator, type ClassificationFigures } from '../../src/evaluation/index.js';
import {
  isDriftSignal,
  JOURNAL_VERSION,
  type JournalRecord,
  type LabelCounts,
  type LifecycleChange,
  type LifecycleRecord,
  type ViewFigures,
} from '../../src/journal/index.js';
import { buildStream, type StreamRequest } from '../../src/streams/index.js';

export interface JournalRunOptions {
  /** Ensemble seats (default 10, bagging's default). */
  readonly members?: number;
  /** Rows to run (default 9,000: three STAGGER concepts of 3,000 rows). */
  readonly rows?: number;
  /** Rows between window records. */
  readonly every?: number;
  /** The stream (default STAGGER a → c → b, a change every 3,000 rows, seed 1). */
  readonly stream?: StreamRequest;
}

export interface JournalRun {
  readonly records: JournalRecord[];
  /** confusion[actual][predicted], counted here from the ensemble's predictions, apart from the evaluator. */
  readonly counted: number[][];
  readonly lifecycle: readonly LifecycleRecord[];
}

const STAGGER: StreamRequest = { generator: 'stagger', concepts: 'a,c,b', every: 3000, seed: 1 };
const WINDOW = 500;

function view(f: ClassificationFigures): ViewFigures {
  return {
    rows: f.rows,
    accuracy: f.accuracy,
    kappa: f.kappa,
    kappaM: f.kappaM,
    kappaNoChange: f.kappaNoChange,
    logLoss: f.logLoss,
    mae: null,
    rmse: null,
    r2: null,
  };
}

/**
 * A real journal, as a replay writes one: online bagging of Hoeffding trees, scored then trained on each
 * row of a stream — by default STAGGER with concepts a → c → b (Schlimmer & Granger 1986; abrupt
 * changes at rows 3,000 and 6,000) — evaluated prequentially; a `window` record every `every` rows and a `summary` at the end.
 */
export function journalRun(options: JournalRunOptions = {}): JournalRun {
  const { members = 10, rows = 9000, every = 250, stream: request = STAGGER } = options;
  const stream = buildStream(request);
  const records: JournalRecord[] = [];
  const lifecycle: LifecycleRecord[] = [];
  let scored = 0;
  const sink = (change: LifecycleChange): void => {
    const r: LifecycleRecord = { ...change, scored };
    lifecycle.push(r);
    records.push(r);
  };
  const started = new Date();
  const ensemble = new Bagging(stream.schema, { members }, 1, sink);
  const version = (
    JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string }
  ).version;
  records.unshift({
    type: 'run',
    version: JOURNAL_VERSION,
    shoal: version,
    startedAt: started.toISOString(),
    source: `${request.generator} ${String(request.concepts ?? '')} every ${request.every ?? '-'}`,
    config: {
      stream: { ...request },
      ensemble: { kind: 'bagging', ...ensemble.options },
      evaluation: { window: WINDOW, every },
    },
    schema: stream.schema,
    seed: String(request.seed),
  });
  const evaluation = new ClassificationEvaluator({ window: WINDOW });
  const classes = stream.classes.length;
  ensemble.ensureClasses(classes);
  evaluation.ensureClasses(classes);
  const counted = Array.from({ length: classes }, () => new Array<number>(classes).fill(0));
  const row = new Float64Array(stream.schema.features.length);
  const verdict = new Verdict();
  const clock = performance.now();
  for (let i = 1; i <= rows; i++) {
    const label = stream.next(row, 0);
    scored = i;
    ensemble.scoreTrain(row, 0, label, verdict);
    evaluation.record(verdict.predicted, label, verdict.probabilities[label]!);
    counted[label]![verdict.predicted]!++;
    if (i % every === 0) {
      const s = evaluation.summary();
      records.push({
        type: 'window',
        scored: i,
        trained: i,
        window: view(s.windowed),
        cumulative: view(s.cumulative),
        seats: ensemble.seats().map((seat) => seat.recentAccuracy),
        labels: inline(i),
      });
    }
  }
  const seconds = (performance.now() - clock) / 1000;
  const total = evaluation.summary().cumulative;
  records.push({
    type: 'summary',
    task: 'classification',
    scored: rows,
    trained: rows,
    rows,
    accuracy: total.accuracy,
    kappa: total.kappa,
    kappaM: total.kappaM,
    kappaNoChange: total.kappaNoChange,
    logLoss: total.logLoss,
    macroF1: total.macroF1,
    mae: null,
    rmse: null,
    r2: null,
    classes: stream.classes,
    confusion: total.confusion,
    driftSignals: lifecycle.filter((r) => isDriftSignal(r.cause)).length,
    warnings: lifecycle.filter((r) => r.cause === 'watched').length,
    replacements: lifecycle.filter((r) => r.to === 'retired').length,
    inputDrifts: 0,
    labels: inline(rows),
    seconds,
    rowsPerSecond: rows / seconds,
  });
  return { records, counted, lifecycle };
}

/**
 * A long journal made of a real one repeated end to end, `times` over: every record shifted by the
 * rows before it, member ids made unique, one `run` at the start and one `summary` at the end whose
 * counts add up. It stands for a multi-million-row replay without running one.
 */
export function tiled(run: JournalRun, times: number): JournalRecord[] {
  const records = run.records;
  const summary = records[records.length - 1]!;
  if (summary.type !== 'summary') throw new Error('a journal run ends with its summary');
  const span = summary.rows;
  const members = Math.max(...run.lifecycle.map((r) => r.member)) + 1;
  const out: JournalRecord[] = [records[0]!];
  for (let k = 0; k < times; k++) {
    for (const r of records) {
      if (r.type === 'lifecycle') {
        // Only the first copy creates the ensemble; later copies carry on with the members they have.
        if (k > 0 && r.cause === 'created') continue;
        out.push({ ...r, ...shifted(r, k * span), member: r.member + k * members });
      } else if (r.type === 'window' || r.type === 'input-drift') out.push({ ...r, ...shifted(r, k * span) });
    }
  }
  out.push({
    ...summary,
    ...shifted(summary, span * (times - 1)),
    rows: span * times,
    confusion: summary.confusion.map((row) => row.map((c) => c * times)),
    driftSignals: summary.driftSignals * times,
    warnings: summary.warnings * times,
    replacements: summary.replacements * times,
  });
  return out;
}

/** The label counts of a run whose `rows` labels all came with their rows. */
function inline(rows: number): LabelCounts {
  return {
    inline: rows,
    joined: 0,
    duplicate: 0,
    late: 0,
    evicted: 0,
    unknown: 0,
    early: 0,
    held: 0,
    trainedUnmatched: 0,
    expiredPredictions: 0,
    evictedPredictions: 0,
    pending: 0,
  };
}

function shifted(r: { readonly scored: number; readonly trained: number }, by: number) {
  return { scored: r.scored + by, trained: r.trained + by };
}
