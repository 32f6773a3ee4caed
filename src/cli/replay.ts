import { ConfigError, ShoalError } from '../core/index.js';
import { DETECTOR_KINDS } from '../drift/index.js';
import { ENSEMBLE_KINDS } from '../ensembles/index.js';
import { countRows, deadLetterFile, recordedChanges } from '../files/index.js';
import { FrameDecoder, type FrameFormat, type FrameOptions } from '../frames/index.js';
import type { JournalRecord, LabelCounts, SummaryRecord } from '../journal/index.js';
import { CLASSIFIER_KINDS, REGRESSOR_KINDS } from '../learners/index.js';
import { EventClock, LearningSession, type RunConfig, resolveConfig } from '../pipeline/index.js';
import { renderReport } from '../report/index.js';
import { parseListen, SessionTelemetry, TelemetryServer } from '../telemetry/index.js';
import { parse, positionals, text, whole } from './args.js';
import { readConfigFile } from './config-file.js';
import { JournalOut } from './journal-out.js';
import { type NamedPath, openOutputs, refuseCollisions } from './outputs.js';
import { Pacer } from './pacer.js';
import { Progress } from './progress.js';
import { DEFAULT_CHECKPOINT_EVERY, ReplayCheckpoints } from './replay-checkpoints.js';
import { feed, type LabelTiming } from './replay-feed.js';
import { describeSchema, overflowWarnings } from './schema-text.js';
import { count, figure, type Terminal, table } from './terminal.js';
import { threadsFrom } from './threads.js';
import { shoalVersion } from './version.js';

export const REPLAY_HELP = `shoal replay FILE [options]

Run a recorded stream (Arrow IPC file or stream, CSV, NDJSON) through an ensemble prequentially:
every row is scored first, then its label judges the prediction, then the ensemble trains on it —
the same scoring, training and member lifecycle the live service runs.

Options:
  --config FILE     shoal.yaml with the ensemble, evaluation and input settings
  --task T          classification (default) or regression (labels are numbers to predict: a bagging
                    of regressors, judged by MAE, RMSE and R²)
  --ensemble KIND   ${ENSEMBLE_KINDS.join(', ')} (default bagging; a regression is bagged)
  --members N       members of a bagging or boosting ensemble (default 10)
  --threads N       train the members of a bagging on N worker threads (ensemble.threads; default 1):
                    the same verdicts, journal and checkpoints as one thread, sooner on several cores
  --learner KIND    the members' learner: ${CLASSIFIER_KINDS.join(', ')};
                    in a regression ${REGRESSOR_KINDS.join(', ')}
  --detector KIND   each member's drift monitor: ${DETECTOR_KINDS.join(', ')}
  --seed S          seed of every random choice
  --label COL       the label column (default "label")
  --id COL          an event-id column
  --schema FILE     the features, declared (YAML or JSON: a list of {name, kind, categories, values},
                    or a mapping with "features"); without it the kinds are inferred from the first rows
  --format F        arrow, csv or ndjson, for a file whose extension does not say
  --labels-as HOW   class-codes (integers 0, 1, …), class-names (any value names a class) or regression
                    (numbers to predict, the same as --task regression); by default codes when the
                    first rows' labels are all integers from 0 to 1023, else names
  --labels FILE     labels in a file of their own (the --id and --label columns), joined by id to the
                    prediction served for each event; the k-th label becomes known once k events were
                    scored (labels left at the end are joined after the last event)
  --label-time COL  the labels file's column of the time each label became known (on the scale of
                    --time); then labels become known by time rather than one per event
  --label-delay N   hold each inline label back until N more rows were scored, then join it by id to
                    the prediction served for its row (rows without --id are joined by row number)
  --label-delay-column COL
                    hold each inline label back until the time in COL (on the scale of --time)
  --time COL        the events' time column (numeric, in order; not a feature); without it, time is
                    the row number
  --journal PATH    write the run's journal (NDJSON: lifecycle changes, evaluation windows, summary)
  --report PATH     write a self-contained HTML report of the run
  --rejects PATH    write rows that cannot be decoded to PATH (NDJSON: source, position, reason) and go on;
                    without it the first bad row stops the run with a message naming file and line
  --checkpoint DIR  write run checkpoints to DIR (the newest 3 are kept), and one when the run ends
  --checkpoint-every N
                    rows between checkpoints (default ${count(DEFAULT_CHECKPOINT_EVERY)})
  --resume DIR      go on from the newest good checkpoint in DIR, skipping the rows it had consumed (give
                    the options of the first run); checkpoints go on being written to DIR
  --metrics HOST:PORT
                    serve /metrics, /healthz, /readyz and /status on HOST:PORT while the run lasts
                    (Prometheus; see deploy/prometheus). Off by default
  --pace N          replay at most N rows per second, as a live stream would arrive (default: as fast as possible)
  --json            print one JSON object instead of the summary table
Without a configuration: 10-member bagging of Hoeffding trees, each watched by ADWIN.
The schema the run uses is printed to stderr before the first row is scored. No output may name an
input or another output; outputs are written beside their path and moved into place when the run ends.`;

/** Fold command-line overrides into the raw configuration, so that they are checked like the file. */
function withOverrides(
  raw: unknown,
  parsed: ReturnType<typeof parse>,
  schema: Record<string, unknown> | undefined,
): unknown {
  // Not a mapping: nothing to fold into; the check reports the top level as it is.
  if (Array.isArray(raw) || (raw !== null && typeof raw !== 'object')) return raw;
  const base = (raw ?? {}) as Record<string, unknown>;
  const ensemble = { ...((base.ensemble ?? {}) as Record<string, unknown>) };
  const inputs = { ...((base.inputs ?? {}) as Record<string, unknown>) };
  const kind = text(parsed, 'ensemble');
  if (kind !== undefined) ensemble.kind = kind;
  const members = whole(parsed, 'members');
  if (members !== undefined) ensemble.members = members;
  const threads = whole(parsed, 'threads');
  if (threads !== undefined) ensemble.threads = threads;
  const learner = text(parsed, 'learner');
  if (learner !== undefined) ensemble.learners = [{ kind: learner }];
  const detector = text(parsed, 'detector');
  if (detector !== undefined) {
    ensemble.lifecycle = {
      ...((ensemble.lifecycle ?? {}) as Record<string, unknown>),
      detector: { kind: detector },
    };
  }
  const label = text(parsed, 'label');
  if (label !== undefined) inputs.label = label;
  const id = text(parsed, 'id');
  if (id !== undefined) inputs.id = id;
  const labelsAs = text(parsed, 'labels-as');
  if (labelsAs !== undefined) inputs.labelsAs = labelsAs;
  if (schema !== undefined) Object.assign(inputs, schema);
  // Time columns are read beside the features, never as features.
  const times = [text(parsed, 'time'), text(parsed, 'label-delay-column')].filter((c) => c !== undefined);
  if (times.length > 0) {
    const excluded = (inputs.exclude as string[] | undefined) ?? [];
    inputs.exclude = [...excluded, ...times.filter((c) => !excluded.includes(c!))];
  }
  const seed = text(parsed, 'seed');
  const task = text(parsed, 'task');
  return {
    ...base,
    ...(seed === undefined ? {} : { seed }),
    ...(task === undefined ? {} : { task }),
    ensemble,
    inputs,
  };
}

/** When labels become known: inline (the default), held back N rows, or from a labels file. */
function labelTiming(parsed: ReturnType<typeof parse>, config: RunConfig): LabelTiming {
  const path = text(parsed, 'labels');
  const delay = whole(parsed, 'label-delay', 0);
  const column = text(parsed, 'label-delay-column');
  const given = [path, delay, column].filter((x) => x !== undefined).length;
  if (given > 1) {
    throw new ShoalError(
      'invalid-parameter',
      'give one of --labels, --label-delay and --label-delay-column, not both',
    );
  }
  const time = text(parsed, 'label-time');
  if (time !== undefined && path === undefined) {
    throw new ShoalError('invalid-parameter', '--label-time names a column of the --labels file');
  }
  const { id, label } = config.inputs;
  if (path !== undefined) {
    if (id === null || label === null) {
      throw new ShoalError(
        'invalid-parameter',
        '--labels needs --id (the column that joins a label to its event) and a label column',
      );
    }
    return { kind: 'file', path, id, label, time: time ?? null };
  }
  if (column !== undefined) return { kind: 'delay-column', column };
  return delay === undefined ? { kind: 'inline' } : { kind: 'delay', rows: delay };
}

/** The run's checkpoints, when `--checkpoint` or `--resume` asks for them. */
function replayCheckpoints(
  parsed: ReturnType<typeof parse>,
  config: RunConfig,
  timing: LabelTiming,
): ReplayCheckpoints | null {
  const resume = text(parsed, 'resume');
  const dir = text(parsed, 'checkpoint') ?? resume;
  const every = whole(parsed, 'checkpoint-every');
  if (dir === undefined) {
    if (every !== undefined) {
      throw new ShoalError('invalid-parameter', '--checkpoint-every needs --checkpoint DIR or --resume DIR');
    }
    return null;
  }
  if (
    resume !== undefined &&
    text(parsed, 'checkpoint') !== undefined &&
    text(parsed, 'checkpoint') !== resume
  ) {
    throw new ShoalError(
      'invalid-parameter',
      '--resume DIR goes on writing checkpoints to DIR; give one directory',
    );
  }
  return new ReplayCheckpoints(dir, every ?? DEFAULT_CHECKPOINT_EVERY, config, shoalVersion(), {
    labels: timing,
    time: text(parsed, 'time') ?? null,
  });
}

/** Replay judges every row, so the label column is named explicitly: a file without it is refused. */
export function frameOptions(config: RunConfig): FrameOptions {
  const { label, id, exclude, features, vocabulary, missing, labelsAs } = config.inputs;
  return {
    label,
    missing,
    ...(labelsAs === null ? {} : { labelsAs }),
    ...(id === null ? {} : { id }),
    exclude,
    ...(features === null ? {} : { features: features as FrameOptions['features'] & object }),
    ...(vocabulary === null ? {} : { vocabulary }),
  };
}

export async function replay(args: readonly string[], terminal: Terminal): Promise<number> {
  const parsed = parse('replay', args, {
    config: { type: 'string' },
    task: { type: 'string' },
    ensemble: { type: 'string' },
    members: { type: 'string' },
    threads: { type: 'string' },
    learner: { type: 'string' },
    detector: { type: 'string' },
    seed: { type: 'string' },
    label: { type: 'string' },
    id: { type: 'string' },
    journal: { type: 'string' },
    report: { type: 'string' },
    json: { type: 'boolean' },
    rejects: { type: 'string' },
    labels: { type: 'string' },
    'label-time': { type: 'string' },
    'label-delay': { type: 'string' },
    schema: { type: 'string' },
    'labels-as': { type: 'string' },
    format: { type: 'string' },
    'label-delay-column': { type: 'string' },
    time: { type: 'string' },
    checkpoint: { type: 'string' },
    'checkpoint-every': { type: 'string' },
    resume: { type: 'string' },
    metrics: { type: 'string' },
    pace: { type: 'string' },
  });
  if (parsed.values.help) {
    terminal.out(`${REPLAY_HELP}\n`);
    return 0;
  }
  const [file] = positionals('replay', parsed, ['FILE']);
  const configPath = text(parsed, 'config');
  const schemaPath = text(parsed, 'schema');
  const named = (flag: string): NamedPath[] => {
    const path = text(parsed, flag);
    return path === undefined ? [] : [{ flag: `--${flag}`, path }];
  };
  const inputs = [{ flag: 'FILE', path: file! }, ...named('config'), ...named('schema'), ...named('labels')];
  const outputs = [...named('journal'), ...named('rejects'), ...named('report')];
  // The checkpoint store writes files of its own, but must not write over an input or an output either.
  await refuseCollisions(inputs, [...outputs, ...named('checkpoint')]);
  const raw = configPath === undefined ? {} : await readConfigFile(configPath);
  const schema = schemaPath === undefined ? undefined : await readSchemaFile(schemaPath);
  const source = configPath ?? 'command line';
  const config = resolveWithFlags(withOverrides(raw, parsed, schema), source, parsed, schemaPath);
  const format = text(parsed, 'format') as FrameFormat | undefined;
  const timing = labelTiming(parsed, config);
  const checkpoints = replayCheckpoints(parsed, config, timing);
  // Opened before the run: a path that cannot be written is refused before any row is read. The
  // journal and rejects writers write to the temporary files, which are moved into place at the end.
  const opened = await openOutputs(inputs, outputs);
  const output = (flag: string) => opened.find((o) => o.flag === flag) ?? null;
  const reportFile = output('--report');
  const journal = new JournalOut(output('--journal')?.partialPath, reportFile !== null);
  const rejectsFile = output('--rejects');
  const rejects = rejectsFile === null ? null : deadLetterFile(rejectsFile.partialPath);
  let rejected = 0;
  const listen = text(parsed, 'metrics');
  const pacer = new Pacer(whole(parsed, 'pace'), () => terminal.now());
  let telemetry: SessionTelemetry | null = null;
  // The session's time is the stream's own (see `feed`): the wall clock only dates the run.
  const clock = new EventClock({ monotonic: () => terminal.now(), wall: () => Date.now() });
  const ports = {
    source: file!,
    journal: {
      write: (r: JournalRecord) => {
        telemetry?.record(r);
        journal.write(r);
      },
      flush: () => journal.flush(),
    },
    clock,
    version: shoalVersion(),
    changes: await recordedChanges(file!, format),
    workers: threadsFrom(null),
    lateLabels: timing.kind !== 'inline',
  };
  const resumed =
    checkpoints !== null && text(parsed, 'resume') !== undefined
      ? await checkpoints.resume(file!, ports, terminal)
      : null;
  // With --labels the events need no label column (a live stream's events carry none either).
  const events =
    timing.kind === 'file' ? { ...frameOptions(config), labelOptional: true } : frameOptions(config);
  const decoder = resumed?.decoder ?? new FrameDecoder(events, source);
  const session = resumed?.session ?? new LearningSession({ ...ports, config });
  let endpoint: TelemetryServer | null = null;
  if (listen !== undefined) {
    const source = SessionTelemetry.of(session, {
      checkpoints: checkpoints !== null,
      wall: () => Date.now(),
    });
    if (checkpoints !== null) checkpoints.saved = () => source.checkpointed();
    telemetry = source;
    endpoint = new TelemetryServer(source, {
      ...parseListen(listen, 'replay --metrics'),
      version: shoalVersion(),
      readiness: ['model'],
    });
    await endpoint.start();
  }
  const json = parsed.values.json === true;
  let summary: SummaryRecord;
  try {
    const progress = new Progress(
      json ? { ...terminal, interactive: false } : terminal,
      terminal.interactive && !json ? await countRows(file!, format) : null,
    );
    let announced = false;
    try {
      await feed({
        file: file!,
        ...(format === undefined ? {} : { format }),
        decoder,
        session,
        clock,
        timing,
        time: text(parsed, 'time') ?? null,
        carryFeatures: config.labels.unmatched === 'train',
        rejects: rejects === null ? 'throw' : 'keep',
        deadLetter: (letter) => {
          rejected++;
          telemetry?.deadLettered(letter.code);
          rejects?.write(letter);
        },
        pacer,
        now: () => terminal.now(),
        scored: (rows, seconds) => {
          endpoint?.batch(rows, seconds);
          endpoint?.setReady('model', true);
        },
        from: resumed?.from ?? 0n,
        beforeScoring: () => {
          if (announced) return;
          announced = true;
          terminal.err(describeSchema(file!, decoder, config.inputs.features !== null));
        },
        afterBatch: async () => {
          progress.update(session.scored, session.recentAccuracy);
          await Promise.all([journal.flush(), rejects?.flush(), checkpoints?.afterBatch(session, decoder)]);
        },
      });
      if (session.scored === 0) throw new ShoalError('invalid-input', `${file}: holds no rows`);
      await checkpoints?.save(session, decoder);
      summary = session.finish(decoder.classes);
    } finally {
      await session.close();
      progress.done();
      await Promise.all([journal.close(), rejects?.close(), endpoint?.close()]);
    }
  } catch (e) {
    await Promise.all(opened.map((o) => o.discard()));
    throw e;
  }
  terminal.err(overflowWarnings(decoder));
  terminal.out(
    json
      ? `${JSON.stringify({ ...jsonSummary(file!, config, summary), rejected })}\n`
      : summaryTable(file!, config, summary, rejected),
  );
  // The summary is out; a failure to finish an output now loses no figures.
  reportFile?.write(renderReport(journal.kept, { title: `Replay of ${file}` }));
  const failures: string[] = [];
  for (const o of opened) {
    try {
      await o.commit();
    } catch (e) {
      failures.push((e as Error).message);
    }
  }
  if (failures.length > 0) throw new ShoalError('io-failure', failures.join('; '));
  return 0;
}

/** The configuration paths each command-line flag sets. */
const FLAG_PATHS: readonly (readonly [string, string])[] = [
  ['task', 'task'],
  ['ensemble', 'ensemble.kind'],
  ['members', 'ensemble.members'],
  ['threads', 'ensemble.threads'],
  ['learner', 'ensemble.learners'],
  ['detector', 'ensemble.lifecycle.detector'],
  ['label', 'inputs.label'],
  ['id', 'inputs.id'],
  ['labels-as', 'inputs.labelsAs'],
  ['seed', 'seed'],
];

/**
 * Check the configuration with the flags folded in; an issue about a value a flag set is reported
 * against the flag (`--learner: must be one of …`), one from a `--schema` file against that file.
 */
function resolveWithFlags(
  raw: unknown,
  source: string,
  parsed: ReturnType<typeof parse>,
  schemaPath: string | undefined,
): RunConfig {
  try {
    return resolveConfig(raw, source);
  } catch (e) {
    if (!(e instanceof ConfigError)) throw e;
    const issues = e.issues.map((issue) => {
      for (const [flag, path] of FLAG_PATHS) {
        if (
          parsed.values[flag] !== undefined &&
          (issue.path === path || issue.path.startsWith(`${path}.`) || issue.path.startsWith(`${path}[`))
        )
          return { ...issue, path: `--${flag}` };
      }
      if (schemaPath !== undefined && issue.path.startsWith('inputs.'))
        return { ...issue, path: `--schema ${schemaPath}: ${issue.path.slice('inputs.'.length)}` };
      return issue;
    });
    throw new ConfigError(source, issues);
  }
}

/** A `--schema` file: a list of features, or a mapping of input settings with `features`. */
async function readSchemaFile(path: string): Promise<Record<string, unknown>> {
  const data = await readConfigFile(path);
  if (Array.isArray(data)) return { features: data };
  if (typeof data === 'object' && data !== null) return data as Record<string, unknown>;
  throw new ShoalError('invalid-config', `--schema ${path}: expected a list of features or a mapping`);
}

function jsonSummary(file: string, config: RunConfig, s: SummaryRecord): Record<string, unknown> {
  const figures =
    s.task === 'regression'
      ? { mae: s.mae, rmse: s.rmse, r2: s.r2 }
      : {
          accuracy: s.accuracy,
          kappa: s.kappa,
          kappaM: s.kappaM,
          kappaNoChange: s.kappaNoChange,
          logLoss: s.logLoss,
          macroF1: s.macroF1,
        };
  return {
    file,
    task: s.task,
    ensemble: config.ensemble.kind,
    seed: config.seed,
    scored: s.scored,
    trained: s.trained,
    rows: s.rows,
    ...figures,
    driftSignals: s.driftSignals,
    warnings: s.warnings,
    replacements: s.replacements,
    inputDrifts: s.inputDrifts,
    labels: s.labels,
    classes: s.classes,
    seconds: s.seconds,
    rowsPerSecond: s.rowsPerSecond,
  };
}

function summaryTable(file: string, config: RunConfig, s: SummaryRecord, rejected: number): string {
  const e = config.ensemble as { kind: string; members?: number; learners?: readonly { kind: string }[] };
  const learners = [...new Set((e.learners ?? [{ kind: 'hoeffding-tree' }]).map((l) => l.kind))].join(', ');
  const head = `replay of ${file}: ${e.kind}${e.members === undefined ? '' : ` of ${e.members}`} (${learners}), seed ${config.seed}\n\n`;
  const figures: [string, string][] =
    s.task === 'regression'
      ? [
          ['MAE', figure(s.mae)],
          ['RMSE', figure(s.rmse)],
          ['R²', figure(s.r2)],
        ]
      : [
          ['accuracy', figure(s.accuracy)],
          ['kappa', figure(s.kappa)],
          ['kappa-M', figure(s.kappaM)],
          ['kappa vs no-change', figure(s.kappaNoChange)],
          ['log-loss', figure(s.logLoss)],
          ['macro F1', figure(s.macroF1)],
          ['drift signals', count(s.driftSignals)],
          ['warnings', count(s.warnings)],
          ['replacements', count(s.replacements)],
        ];
  return (
    head +
    table([
      ['rows scored', count(s.scored)],
      ['rows rejected', count(rejected)],
      ['rows judged', count(s.rows)],
      ['rows trained', count(s.trained)],
      ...labelLines(s.labels),
      ...figures,
      ['input drifts', count(s.inputDrifts)],
      ['rows/s', count(s.rowsPerSecond)],
      ['seconds', s.seconds.toFixed(1)],
    ])
  );
}

/** The label outcomes worth a line: those that happened (inline labels are the rows judged). */
function labelLines(l: LabelCounts): [string, string][] {
  const lines: [string, number][] = [
    ['labels joined late', l.joined],
    ['labels for joined ids', l.duplicate],
    ['labels after expiry', l.late],
    ['labels after eviction', l.evicted],
    ['labels with unknown ids', l.unknown],
    ['labels before their events', l.early],
    ['labels held for their events', l.held],
    ['unmatched labels trained', l.trainedUnmatched],
    ['predictions expired', l.expiredPredictions],
    ['predictions evicted', l.evictedPredictions],
    ['predictions pending', l.pending],
  ];
  return lines.filter(([, n]) => n > 0).map(([name, n]) => [name, count(n)]);
}
