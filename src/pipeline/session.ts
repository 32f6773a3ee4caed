import { type ChangePoints, type FeatureSchema, ShoalError } from '../core/index.js';
import {
  createInputMonitor,
  type InputMonitor,
  type InputMonitorSnapshot,
  restoreInputMonitor,
} from '../drift/index.js';
import { BatchVerdicts, type EnsembleSnapshot, type SeatView, Verdict } from '../ensembles/index.js';
import type { EvaluatorSnapshot } from '../evaluation/index.js';
import type { Frame } from '../frames/index.js';
import {
  isDriftSignal,
  JOURNAL_VERSION,
  type LabelCounts,
  LIFECYCLE_CAUSES,
  type LifecycleCause,
  type LifecycleChange,
  type SummaryRecord,
  type WindowRecord,
} from '../journal/index.js';
import { modelConfig, type RunConfig } from './config.js';
import { ALREADY_HELD, EarlyLabels, type EarlyLabelsSnapshot, HELD_PUSHED_OUT } from './early-labels.js';
import {
  GONE_EVICTED,
  GONE_EXPIRED,
  GONE_JOINED,
  type PendingSnapshot,
  PendingStore,
} from './pending-store.js';
import type {
  Clock,
  DriftSignal,
  EnsembleThreads,
  JournalSink,
  ScoreBatch,
  SessionMetrics,
  ThreadedEnsemble,
} from './ports.js';
import { ScoreBuffers } from './score-buffers.js';
import {
  createModel,
  createScorecard,
  restoreModel,
  restoreScorecard,
  type Scorecard,
  type SessionModel,
  type SessionModelSnapshot,
} from './task.js';

/** What a session is built with: its configuration and the ports it writes to and reads time from. */
export interface SessionOptions {
  readonly config: RunConfig;
  /** Where the rows come from, for the journal. */
  readonly source: string;
  readonly journal: JournalSink;
  readonly clock: Clock;
  /** Shoal's version, for the journal. */
  readonly version: string;
  /** The stream's true change points, when the source records them (journaled in the run record). */
  readonly changes?: ChangePoints | null;
  /** Puts the ensemble on worker threads when `config.threads` > 1 (the CLI passes src/parallel's). */
  readonly workers?: EnsembleThreads;
  /**
   * Whether labels can come after their events (a labels topic or file, labels held back): true by
   * default. When false, a row whose label came with it leaves nothing behind — its id is not remembered
   * for a later label that cannot come, which saves two map operations a row and keeps checkpoints small.
   */
  readonly lateLabels?: boolean;
}

/** Member drift signals the metrics surface keeps (the most recent ones). */
const RECENT_SIGNALS = 64;
/** Upper bounds (seconds) of the label-delay buckets the metrics surface counts; the last is +∞. */
export const LABEL_DELAY_BOUNDS: readonly number[] = [1, 10, 60, 600, 3600, 21_600, 86_400, 604_800];

const KIND = 'learning-session';
const VERSION = 4;

/**
 * The learning session: everything the model side does with a stream, for every source alike
 * (`replay`, `serve`, `demo` differ only in the adapters that feed it). It owns all run state — the
 * ensemble, the evaluator, the input monitor, the pending predictions and the counters — and does no
 * I/O: it writes to the `JournalSink` it is given and reads time from the `Clock` it is given. A
 * classification and a regression (`config.task`) differ only in the model and the scorecard they
 * build (`task.ts`); a regression's labels are the numbers to predict, and it has no classes.
 *
 * - `score(frame, classes)`: a verdict for every row (returned in reused buffers); every row goes
 *   through the input monitor. A row whose label came with it is judged on the prediction just served
 *   and trained on at once. A row with an id and no label leaves a pending prediction: the row's values,
 *   the served probabilities and class, the model epoch and the time.
 * - `learn(labels, classes)`: each label is joined by id to its pending prediction; the prediction that
 *   was *served* is judged (never a re-score) and the ensemble trains on the stored row. A label that
 *   finds no prediction is counted by what became of it — `duplicate` (already joined), `late` (the
 *   prediction expired), `evicted` (it was evicted to make room) or `unknown` — and, under the setting
 *   `labels.unmatched: train`, trained on from its own row when the label carries the row's features
 *   (`ignore`, the default, trains on nothing that was not served).
 * - A label whose id the session has never seen came before its event (two topics are not read in
 *   step): it is held for the event (`EarlyLabels`, bounded by `labels.early` and
 *   `labels.earlyWaitSeconds`). When the event is scored, the label is joined right after the rows of
 *   that `score` call, in their order — exactly as a label that came then — and counts as joined; one
 *   let go unjoined counts as unknown. (Under `unmatched: train`, a label that carries its row is
 *   trained on at once instead, as before.)
 * - Pending predictions are bounded by count and by age (`labels.pending`, `labels.maxAgeSeconds`);
 *   expiries are returned by `expire()` and counted.
 *
 * Every counter is read through `metrics` (a read-only view for telemetry) and journaled in `window`
 * and `summary` records. `snapshot()` returns the whole state, JSON-safe; `LearningSession.restore`
 * continues exactly where it was taken.
 *
 * With `config.threads` > 1 (a bagging ensemble) the members train on worker threads: drive the session
 * with `scoreAsync`, `learnAsync` and `snapshotAsync`, and `close` it at the end. The workers run a whole
 * batch while this thread stays free; then the batch's verdicts, lifecycle changes and seat accuracies
 * are replayed through the same per-row code, so the journal, the scores and the snapshot are those of
 * one thread.
 *
 * @example
 * const session = new LearningSession({ config, source: 'legs.arrow', journal, clock, version });
 * for await (const { frame } of readFrames('legs.arrow', decoder)) session.score(frame, decoder.classes);
 * const labels = decoder.labelsDecoder({ id: 'leg_id', label: 'rejected' });
 * for await (const { frame } of readFrames('labels.csv', labels)) session.learn(frame, decoder.classes);
 * const summary = session.finish(decoder.classes);
 */
export class LearningSession {
  readonly config: RunConfig;
  private readonly options: SessionOptions;
  private ensemble: SessionModel | null = null;
  /** The ensemble once it is on worker threads (then `ensemble` is null). */
  private threaded: ThreadedEnsemble | null = null;
  /** The threaded ensemble's answers for the batch being replayed. */
  private readonly batch = new BatchVerdicts();
  /** The row of `batch` the next model step takes (−1: steps run the model in this thread). */
  private step = -1;
  private nextChange = 0;
  /** Each seat's recent accuracy before the batch. */
  private before: readonly number[] = [];
  private batchLabels = new Float64Array(0);
  /** Rows and labels `learnAsync` gathers to train on, and its journal records held until they ran. */
  private gathered = new Float64Array(0);
  private gatheredLabels = new Float64Array(0);
  private gatheredRows = 0;
  private held: (number | WindowRecord)[] | null = null;
  private monitor: InputMonitor | null = null;
  private pending: PendingStore | null = null;
  private early: EarlyLabels;
  /** While the held labels whose events were just scored are joined (they are not held again). */
  private joining = false;
  private scorecard: Scorecard;
  private readonly verdict = new Verdict();
  private readonly scores = new ScoreBuffers();
  private schema: FeatureSchema | null = null;
  private startedAt = 0;
  private scoredAtStart = 0;
  private readonly counts = new Counts();
  private readonly causes = new Float64Array(LIFECYCLE_CAUSES.length);
  private inputDriftCounts = new Float64Array(0);
  private readonly recent: DriftSignal[] = [];
  private readonly delays = new Float64Array(LABEL_DELAY_BOUNDS.length + 1);
  private readonly positions = new Map<string, bigint>();
  /** The read-only view telemetry reads at scrape time. */
  readonly metrics: SessionMetrics;

  constructor(options: SessionOptions) {
    this.options = options;
    this.config = options.config;
    this.scorecard = createScorecard(options.config.task, {
      window: options.config.evaluation.window,
      fading: options.config.evaluation.fading,
    });
    this.early = new EarlyLabels(options.config.labels.early);
    this.metrics = metricsOf(this);
  }

  /** The ensemble (built from the first batch's schema), or null before it. */
  get model(): SessionModel | ThreadedEnsemble | null {
    return this.threaded ?? this.ensemble;
  }

  get scored(): number {
    return this.counts.scored;
  }

  get trained(): number {
    return this.counts.trained;
  }

  /** Rows judged: a label joined to the prediction served for it. */
  get judged(): number {
    return this.counts.judged;
  }

  /** Accuracy over the evaluation window, or null before the first judged row (and in a regression). */
  get recentAccuracy(): number | null {
    return this.counts.judged > 0 ? this.scorecard.windowAccuracy() : null;
  }

  /**
   * Score rows `from` … `to` − 1 of a frame (all of them by default); rows with a label are judged and
   * trained on at once. Row r of the returned batch is row `first + r` of the frame.
   */
  score(frame: Frame, classes: readonly string[], from = 0, to = frame.rows): ScoreBatch {
    const ensemble = this.ensure(frame.schema, classes);
    if (this.threaded !== null && this.step < 0) {
      throw new ShoalError('invalid-parameter', 'a session on worker threads scores with scoreAsync');
    }
    const now = this.options.clock.event();
    this.expireAt(now);
    const { values, labels, ids, width } = frame;
    const verdict = this.verdict;
    const monitor = this.monitor;
    const pending = this.pending!;
    const out = this.scores.reserve(from, to - from, ensemble.classes, classes, ids, now);
    const counts = this.counts;
    const early = this.early;
    const settles = ids !== null && this.options.lateLabels !== false;
    // The monitor reads the rows feature by feature first; each flag is journaled at its row.
    const flags = monitor === null ? 0 : monitor.updateRows(values, from * width, to - from);
    let flag = 0;
    for (let r = from; r < to; r++) {
      const offset = r * width;
      if (flag < flags && monitor!.flagRows[flag] === r - from) flag = this.inputDrift(monitor!, flag, flags);
      counts.scored++;
      const label = labels === null ? Number.NaN : labels[r]!;
      if (Number.isNaN(label)) {
        if (this.step >= 0) this.replay(verdict);
        else (ensemble as SessionModel).score(values, offset, verdict);
        if (ids !== null) {
          if (pending.put(ids[r]!, values, offset, verdict, now) === GONE_EVICTED)
            counts.evictedPredictions++;
          if (early.size > 0) early.claim(ids[r]!);
        }
      } else {
        if (this.step >= 0) this.replay(verdict);
        else (ensemble as SessionModel).scoreTrain(values, offset, label, verdict);
        if (settles && pending.settled(ids![r]!) === GONE_EVICTED) counts.evictedPredictions++;
        // The event brought its own label: one held for it is a second label for a joined id.
        if (settles && early.size > 0 && early.drop(ids![r]!)) counts.duplicate++;
        counts.inline++;
        counts.trained++;
        this.judge(
          verdict.predicted,
          verdict.value,
          label,
          label < verdict.classes ? verdict.probabilities[label]! : 0,
        );
      }
      this.scores.put(r - from, verdict);
    }
    // On worker threads, `scoreAsync` joins them once the batch's answers are all taken.
    if (this.threaded === null) this.joinEarly(classes);
    return out;
  }

  /** Join the held labels whose events the last `score` call scored, in the order they were scored. */
  private joinEarly(classes: readonly string[]): void {
    const ready = this.early.ready();
    if (ready === null) return;
    this.joining = true;
    try {
      this.learn(ready, classes);
    } finally {
      this.joining = false;
      this.early.clearReady();
    }
  }

  /** `joinEarly` with the ensemble on worker threads. */
  private async joinEarlyAsync(classes: readonly string[]): Promise<void> {
    const ready = this.early.ready();
    if (ready === null) return;
    this.joining = true;
    try {
      await this.learnAsync(ready, classes);
    } finally {
      this.joining = false;
      this.early.clearReady();
    }
  }

  /** Hold a label that came before its event; one pushed out to make room counts as unknown. */
  private hold(id: string, label: number, now: number): void {
    const outcome = this.early.hold(id, label, now);
    const counts = this.counts;
    if (outcome === ALREADY_HELD) {
      counts.duplicate++;
      return;
    }
    counts.early++;
    if (outcome === HELD_PUSHED_OUT) counts.unknown++;
  }

  /**
   * Join labels (rows `from` … `to` − 1 of a frame, all by default) to their pending predictions by id:
   * `frame.ids` and `frame.labels` are required; the frame's values are the labels' own rows when
   * `frame.width` equals the events' width (used only by the `train` policy for unmatched labels).
   * Returns the number of rows that carried no label (NaN), which the driver dead-letters; every other
   * row is counted under one outcome.
   */
  learn(frame: Frame, classes: readonly string[], from = 0, to = frame.rows): number {
    const { ids, labels } = frame;
    if (ids === null || labels === null) {
      throw new ShoalError(
        'invalid-parameter',
        `${frame.origin.source}: labels need an id column and a label column to be joined`,
      );
    }
    if (this.threaded !== null && this.held === null) {
      throw new ShoalError('invalid-parameter', 'a session on worker threads learns with learnAsync');
    }
    const now = this.options.clock.event();
    this.expireAt(now);
    const ensemble = this.model;
    if (ensemble !== null) this.announce(classes);
    const pending = this.pending;
    const counts = this.counts;
    const carries = ensemble !== null && frame.width === ensemble.schema.features.length && frame.width > 0;
    const trainUnmatched = this.config.labels.unmatched === 'train' && carries;
    let missing = 0;
    for (let r = from; r < to; r++) {
      const label = labels[r]!;
      if (Number.isNaN(label)) {
        missing++;
        continue;
      }
      const id = ids[r]!;
      const slot = pending === null ? -1 : pending.find(id);
      if (slot >= 0) {
        const store = pending!;
        this.judge(store.predictedOf(slot), store.valueOf(slot), label, store.probability(slot, label));
        this.train(store.rows, store.offsetOf(slot), label);
        this.delay(now - store.timeOf(slot));
        store.joined(slot);
        counts.joined++;
        counts.trained++;
        continue;
      }
      const fate = pending === null ? 0 : pending.fate(id);
      if (fate === GONE_JOINED) counts.duplicate++;
      else if (fate === GONE_EXPIRED) counts.late++;
      else if (fate === GONE_EVICTED) counts.evicted++;
      else if (this.early.capacity > 0 && !trainUnmatched && !this.joining) {
        this.hold(id, label, now);
        continue;
      } else counts.unknown++;
      if (trainUnmatched && fate !== GONE_JOINED) {
        this.train(frame.values, r * frame.width, label);
        counts.trainedUnmatched++;
        counts.trained++;
      }
    }
    return missing;
  }

  /**
   * `score`, with the ensemble on worker threads when the configuration asks for them: the workers score
   * (and train on the rows with labels) the whole range while this thread stays free, then `score`
   * replays their answers row by row.
   */
  async scoreAsync(frame: Frame, classes: readonly string[], from = 0, to = frame.rows): Promise<ScoreBatch> {
    this.ensure(frame.schema, classes);
    const threaded = await this.onThreads();
    if (threaded === null) return this.score(frame, classes, from, to);
    const n = to - from;
    if (this.batchLabels.length < n) this.batchLabels = new Float64Array(n);
    const labels = frame.labels;
    for (let r = 0; r < n; r++) this.batchLabels[r] = labels === null ? Number.NaN : labels[from + r]!;
    await this.runBatch(threaded, frame.values.subarray(from * frame.width), this.batchLabels, n);
    let out: ScoreBatch;
    try {
      out = this.score(frame, classes, from, to);
    } finally {
      this.step = -1;
    }
    await this.joinEarlyAsync(classes);
    return out;
  }

  /**
   * `learn`, with the ensemble on worker threads when the configuration asks for them: the rows to
   * train on are gathered (and the journal records that follow them held back), the workers train on
   * them, then their lifecycle changes and the held records are written in the order of one thread.
   */
  async learnAsync(frame: Frame, classes: readonly string[], from = 0, to = frame.rows): Promise<number> {
    const threaded = await this.onThreads();
    if (threaded === null) return this.learn(frame, classes, from, to);
    const held: (number | WindowRecord)[] = [];
    this.held = held;
    this.gatheredRows = 0;
    let missing: number;
    try {
      missing = this.learn(frame, classes, from, to);
    } finally {
      this.held = null;
    }
    const width = threaded.schema.features.length;
    const rows = this.gatheredRows;
    if (rows > 0)
      await this.runBatch(threaded, this.gathered.subarray(0, rows * width), this.gatheredLabels, rows);
    try {
      for (const item of held) {
        if (typeof item === 'number') this.replay(null);
        else this.options.journal.write({ ...item, seats: this.seatAccuracies() });
      }
    } finally {
      this.step = -1;
    }
    return missing;
  }

  /** `snapshot`, waiting for the workers' part when the ensemble is on worker threads. */
  async snapshotAsync(): Promise<SessionSnapshot> {
    return this.snapshotWith(this.threaded === null ? undefined : await this.threaded.snapshot());
  }

  /** Stop the worker threads, if any (the session cannot score after). */
  async close(): Promise<void> {
    await this.threaded?.close();
  }

  /** Expire pending predictions older than the age bound now; returns how many expired. */
  expire(): number {
    return this.expireAt(this.options.clock.event());
  }

  /** Count rows the driver could not decode (dead-lettered), for the metrics surface. */
  reject(rows: number): void {
    this.counts.rejected += rows;
  }

  /** Remember where a stream resumes once its batch is fully handled (kept in the snapshot). */
  advance(stream: string, next: bigint): void {
    this.positions.set(stream, next);
  }

  /** Where each stream resumes. */
  resumePositions(): ReadonlyMap<string, bigint> {
    return this.positions;
  }

  /** What became of labels and pending predictions so far. */
  labelCounts(): LabelCounts {
    const c = this.counts;
    return {
      inline: c.inline,
      joined: c.joined,
      duplicate: c.duplicate,
      late: c.late,
      evicted: c.evicted,
      unknown: c.unknown,
      early: c.early,
      held: this.early.size,
      trainedUnmatched: c.trainedUnmatched,
      expiredPredictions: c.expiredPredictions,
      evictedPredictions: c.evictedPredictions,
      pending: this.pending?.size ?? 0,
    };
  }

  /** Close the run: the final figures, also written to the journal. */
  finish(classes: readonly string[]): SummaryRecord {
    const c = this.counts;
    if (c.judged % this.config.evaluation.journalEvery !== 0 && c.judged > 0) this.window();
    const seconds = Math.max(1e-9, (this.options.clock.monotonic() - this.startedAt) / 1000);
    const summary: SummaryRecord = {
      type: 'summary',
      scored: c.scored,
      trained: c.trained,
      rows: c.judged,
      ...this.scorecard.summary(classes),
      driftSignals: c.driftSignals,
      warnings: c.warnings,
      replacements: c.replacements,
      inputDrifts: c.inputDrifts,
      labels: this.labelCounts(),
      seconds,
      rowsPerSecond: (c.scored - this.scoredAtStart) / seconds,
    };
    this.options.journal.write(summary);
    return summary;
  }

  /** The whole state of the session, JSON-safe: `LearningSession.restore` continues from it exactly. */
  snapshot(): SessionSnapshot {
    if (this.threaded !== null) {
      throw new ShoalError('invalid-parameter', 'a session on worker threads is snapshot with snapshotAsync');
    }
    return this.snapshotWith(undefined);
  }

  private snapshotWith(threaded: EnsembleSnapshot | undefined): SessionSnapshot {
    return {
      kind: KIND,
      version: VERSION,
      config: this.config,
      schema: this.schema,
      ensemble: threaded ?? this.ensemble?.snapshot() ?? null,
      evaluator: this.scorecard.snapshot(),
      monitor: this.monitor?.snapshot() ?? null,
      pending: this.pending?.snapshot() ?? null,
      early: this.early.snapshot(),
      counts: { ...this.counts },
      causes: Array.from(this.causes),
      inputDrifts: Array.from(this.inputDriftCounts),
      recentDriftSignals: [...this.recent],
      labelDelays: Array.from(this.delays),
      positions: Object.fromEntries([...this.positions].map(([k, v]) => [k, v.toString()])),
    };
  }

  /**
   * A session that goes on exactly where `snapshot` was taken, writing to the ports in `options`
   * (its configuration is the snapshot's). It writes no new `run` record: the journal goes on.
   */
  static restore(
    snapshot: SessionSnapshot,
    options: Omit<SessionOptions, 'config'> & {
      /** The threads to go on with (`config.threads`), which may differ from the snapshot's. */
      readonly threads?: number;
    },
  ): LearningSession {
    if (!snapshot || snapshot.kind !== KIND || snapshot.version !== VERSION) {
      throw new ShoalError(
        'invalid-snapshot',
        `expected a ${KIND} snapshot of version ${VERSION}, got ${String(snapshot?.kind)} version ${String(snapshot?.version)}`,
      );
    }
    const threads = options.threads ?? snapshot.config.threads ?? 1;
    const session = new LearningSession({ ...options, config: { ...snapshot.config, threads } });
    session.restoreState(snapshot);
    return session;
  }

  private restoreState(s: SessionSnapshot): void {
    this.scorecard = restoreScorecard(this.config.task, s.evaluator);
    this.schema = s.schema;
    this.startedAt = this.options.clock.monotonic();
    if (s.ensemble !== null)
      this.ensemble = restoreModel(this.config.task, s.ensemble, (c) => this.lifecycle(c));
    if (s.monitor !== null) this.monitor = restoreInputMonitor(s.monitor);
    if (s.pending !== null) this.pending = PendingStore.restore(s.pending);
    this.early = EarlyLabels.restore(s.early);
    Object.assign(this.counts, s.counts);
    this.scoredAtStart = this.counts.scored;
    const numbers = (list: readonly number[], into: Float64Array, what: string): void => {
      if (!Array.isArray(list) || list.length !== into.length || !list.every((n) => typeof n === 'number')) {
        throw new ShoalError('invalid-snapshot', `${KIND} snapshot: ${what} must be ${into.length} numbers`);
      }
      into.set(list);
    };
    numbers(s.causes, this.causes, 'causes');
    numbers(s.labelDelays, this.delays, 'labelDelays');
    this.inputDriftCounts = new Float64Array(s.schema?.features.length ?? 0);
    numbers(s.inputDrifts, this.inputDriftCounts, 'inputDrifts');
    this.recent.push(...s.recentDriftSignals);
    for (const [k, v] of Object.entries(s.positions)) this.positions.set(k, BigInt(v));
  }

  /** Build the ensemble, monitor and pending store on the first batch; announce classes as they appear. */
  private ensure(schema: FeatureSchema, classes: readonly string[]): SessionModel | ThreadedEnsemble {
    const model = this.model;
    if (model === null) {
      const { config, version, source, clock, changes } = this.options;
      this.schema = schema;
      this.startedAt = clock.monotonic();
      this.options.journal.write({
        type: 'run',
        version: JOURNAL_VERSION,
        shoal: version,
        startedAt: new Date(clock.wall()).toISOString(),
        source,
        config: modelConfig(config) as unknown as Record<string, unknown>,
        schema,
        seed: config.seed,
        ...(changes === undefined || changes === null ? {} : { changes }),
      });
      this.ensemble = createModel(config, schema, (c) => this.lifecycle(c));
      if (config.inputs.monitor) this.monitor = createInputMonitor(schema);
      this.pending = new PendingStore(config.labels.pending, schema.features.length, classes.length);
      this.inputDriftCounts = new Float64Array(schema.features.length);
    } else if (schema.features.length !== model.schema.features.length) {
      throw new ShoalError(
        'invalid-input',
        `a frame of ${schema.features.length} features, but the session's schema has ${model.schema.features.length}`,
      );
    }
    this.announce(classes);
    return this.model!;
  }

  /** The ensemble on worker threads, moved there on first call when the configuration asks; else null. */
  private async onThreads(): Promise<ThreadedEnsemble | null> {
    if (this.threaded !== null || this.ensemble === null || this.config.threads <= 1) return this.threaded;
    const start = this.options.workers;
    if (start === undefined) {
      throw new ShoalError(
        'invalid-parameter',
        `ensemble.threads is ${this.config.threads}, but this session was given no way to start worker threads`,
      );
    }
    this.threaded = await start(this.ensemble.snapshot() as EnsembleSnapshot, this.config.threads);
    this.ensemble = null;
    return this.threaded;
  }

  /** Run a batch on the threads; its answers are then taken row by row (`replay`). */
  private async runBatch(
    threaded: ThreadedEnsemble,
    values: Float64Array,
    labels: Float64Array,
    rows: number,
  ): Promise<void> {
    this.before = threaded.seats().map((seat) => seat.recentAccuracy);
    await threaded.scoreTrainBatch(values, labels, rows, this.batch);
    this.step = 0;
    this.nextChange = 0;
  }

  /** Take the next row of the batch: its verdict (when asked) and the lifecycle changes it made. */
  private replay(verdict: Verdict | null): void {
    const batch = this.batch;
    const row = this.step++;
    if (verdict !== null) batch.verdictAt(row, verdict);
    while (this.nextChange < batch.changes.length && batch.rows[this.nextChange] === row)
      this.lifecycle(batch.changes[this.nextChange++]!);
  }

  /** Train the ensemble on a row, or gather it for the threads (`learnAsync`). */
  private train(values: Float64Array, offset: number, label: number): void {
    const held = this.held;
    if (held === null) {
      (this.ensemble as SessionModel).train(values, offset, label);
      return;
    }
    const width = this.threaded!.schema.features.length;
    const n = this.gatheredRows++;
    if (this.gatheredLabels.length <= n) {
      const rows = new Float64Array(2 * (n + 1) * width);
      rows.set(this.gathered);
      this.gathered = rows;
      const labels = new Float64Array(2 * (n + 1));
      labels.set(this.gatheredLabels);
      this.gatheredLabels = labels;
    }
    this.gathered.set(values.subarray(offset, offset + width), n * width);
    this.gatheredLabels[n] = label;
    held.push(n);
  }

  /** Each seat's recent accuracy now (after the batch's last row taken, while one is replayed). */
  private seatAccuracies(): number[] {
    if (this.step < 0) return this.model!.seats().map((seat) => seat.recentAccuracy);
    if (this.step === 0) return [...this.before];
    const members = this.batch.members;
    return Array.from(this.batch.accuracy.subarray((this.step - 1) * members, this.step * members));
  }

  private announce(classes: readonly string[]): void {
    const n = Math.max(1, classes.length);
    const model = this.model!;
    if (n > model.classes) {
      model.ensureClasses(n);
      this.scorecard.ensureClasses(n);
    }
    this.pending!.ensureClasses(n);
  }

  /** Let go of pending predictions and held labels past their age bounds; returns the predictions. */
  private expireAt(now: number): number {
    const early = this.early;
    if (early.size > 0) this.counts.unknown += early.expire(now - this.config.labels.earlyWaitSeconds * 1000);
    const pending = this.pending;
    const seconds = this.config.labels.maxAgeSeconds;
    if (pending === null || seconds === null || pending.size === 0) return 0;
    const expired = pending.expire(now - seconds * 1000);
    this.counts.expiredPredictions += expired;
    return expired;
  }

  /** Judge a served prediction: its class and the probability it gave `label`, or its number. */
  private judge(predicted: number, value: number, label: number, probability: number): void {
    this.scorecard.record(predicted, value, label, probability);
    if (++this.counts.judged % this.config.evaluation.journalEvery === 0) this.window();
  }

  private delay(ms: number): void {
    const seconds = ms / 1000;
    this.counts.delaySeconds += seconds;
    let k = 0;
    while (k < LABEL_DELAY_BOUNDS.length && seconds > LABEL_DELAY_BOUNDS[k]!) k++;
    this.delays[k]!++;
  }

  private lifecycle(change: LifecycleChange): void {
    const c = this.counts;
    this.causes[LIFECYCLE_CAUSES.indexOf(change.cause)]!++;
    if (isDriftSignal(change.cause)) {
      c.driftSignals++;
      if (this.recent.length === RECENT_SIGNALS) this.recent.shift();
      this.recent.push({
        scored: c.scored,
        trained: change.trained,
        seat: change.seat,
        member: change.member,
        detector: change.detector,
        cause: change.cause,
        estimate: change.estimate,
      });
    }
    if (change.cause === 'watched') c.warnings++;
    if (change.to === 'retired') c.replacements++;
    this.options.journal.write({ ...change, scored: c.scored });
  }

  /** Journal the monitor's flags from `first` on that are of the row of flag `first`; returns the next. */
  private inputDrift(monitor: InputMonitor, first: number, count: number): number {
    const features = this.schema!.features;
    const c = this.counts;
    const row = monitor.flagRows[first]!;
    let i = first;
    for (; i < count && monitor.flagRows[i] === row; i++) {
      const j = monitor.flagged[i]!;
      const f = features[j]!;
      c.inputDrifts++;
      this.inputDriftCounts[j]!++;
      this.options.journal.write({
        type: 'input-drift',
        scored: c.scored,
        trained: c.trained,
        feature: f.name,
        kind: f.kind,
        cause: monitor.missingFlags[i] === 1 ? 'missing-share' : 'distribution',
      });
    }
    return i;
  }

  private window(): void {
    const record: WindowRecord = {
      type: 'window',
      scored: this.counts.scored,
      trained: this.counts.trained,
      window: this.scorecard.windowed(),
      cumulative: this.scorecard.cumulative(),
      seats: this.held === null ? this.seatAccuracies() : [],
      labels: this.labelCounts(),
    };
    // While `learnAsync` gathers rows, the seats are those after the rows gathered so far have trained.
    if (this.held === null) this.options.journal.write(record);
    else this.held.push(record);
  }

  /** For the metrics view. */
  causeCounts(): Readonly<Record<LifecycleCause, number>> {
    return Object.fromEntries(LIFECYCLE_CAUSES.map((cause, k) => [cause, this.causes[k]!])) as Record<
      LifecycleCause,
      number
    >;
  }

  inputDriftsByFeature(): ReadonlyMap<string, number> {
    const features = this.schema?.features ?? [];
    return new Map(features.map((f, j) => [f.name, this.inputDriftCounts[j]!]));
  }

  recentDriftSignals(): readonly DriftSignal[] {
    return [...this.recent];
  }

  labelDelays(): readonly number[] {
    return Array.from(this.delays);
  }

  delaySum(): number {
    return this.counts.delaySeconds;
  }

  seats(): readonly SeatView[] {
    return this.model?.seats() ?? [];
  }

  pendingStats(): { readonly size: number; readonly capacity: number } {
    return { size: this.pending?.size ?? 0, capacity: this.pending?.capacity ?? this.config.labels.pending };
  }

  rejectedRows(): number {
    return this.counts.rejected;
  }

  windowFigures(): { readonly accuracy: number | null; readonly kappa: number | null } {
    if (this.counts.judged === 0) return { accuracy: null, kappa: null };
    return { accuracy: this.scorecard.windowAccuracy(), kappa: this.scorecard.windowKappa() };
  }
}

/** The session's counters (one object, copied into snapshots). */
class Counts {
  scored = 0;
  trained = 0;
  judged = 0;
  rejected = 0;
  inline = 0;
  joined = 0;
  duplicate = 0;
  late = 0;
  evicted = 0;
  unknown = 0;
  /** Labels that came before their event and were held for it. */
  early = 0;
  trainedUnmatched = 0;
  expiredPredictions = 0;
  evictedPredictions = 0;
  driftSignals = 0;
  warnings = 0;
  replacements = 0;
  inputDrifts = 0;
  /** Sum of the delays of joined labels, in seconds. */
  delaySeconds = 0;
}

export type SessionCounts = { readonly [K in keyof Counts]: number };

/** A session's whole state, JSON-safe (see `LearningSession.snapshot`). */
export interface SessionSnapshot {
  readonly kind: typeof KIND;
  readonly version: number;
  readonly config: RunConfig;
  readonly schema: FeatureSchema | null;
  readonly ensemble: SessionModelSnapshot | null;
  readonly evaluator: EvaluatorSnapshot;
  readonly monitor: InputMonitorSnapshot | null;
  readonly pending: PendingSnapshot | null;
  /** Labels held for their events, oldest first. */
  readonly early: EarlyLabelsSnapshot;
  readonly counts: SessionCounts;
  /** Lifecycle changes by cause, in `LIFECYCLE_CAUSES` order. */
  readonly causes: readonly number[];
  /** Input-drift flags by feature index. */
  readonly inputDrifts: readonly number[];
  readonly recentDriftSignals: readonly DriftSignal[];
  /** Joined labels by delay bucket (`LABEL_DELAY_BOUNDS`, then +∞). */
  readonly labelDelays: readonly number[];
  /** Where each stream resumes, as decimal text (64-bit positions). */
  readonly positions: Readonly<Record<string, string>>;
}

/** The read-only metrics view of a session: getters and methods that read its state when called. */
function metricsOf(s: LearningSession): SessionMetrics {
  return {
    get scored() {
      return s.scored;
    },
    get trained() {
      return s.trained;
    },
    get judged() {
      return s.judged;
    },
    get rejected() {
      return s.rejectedRows();
    },
    labels: () => s.labelCounts(),
    get pendingSize() {
      return s.pendingStats().size;
    },
    get pendingCapacity() {
      return s.pendingStats().capacity;
    },
    get windowAccuracy() {
      return s.windowFigures().accuracy;
    },
    get windowKappa() {
      return s.windowFigures().kappa;
    },
    labelDelays: () => ({ bounds: LABEL_DELAY_BOUNDS, counts: s.labelDelays(), sum: s.delaySum() }),
    lifecycleCounts: () => s.causeCounts(),
    inputDrifts: () => s.inputDriftsByFeature(),
    recentDriftSignals: () => s.recentDriftSignals(),
    seats: () => s.seats(),
    get epoch() {
      return s.model?.epoch ?? 0;
    },
    modelBytes: () => s.model?.sizeBytes() ?? 0,
  };
}
