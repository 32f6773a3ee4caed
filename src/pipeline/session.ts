import { type ChangePoints, type FeatureSchema, ShoalError } from '../core/index.js';
import {
  createInputMonitor,
  type InputMonitor,
  type InputMonitorSnapshot,
  restoreInputMonitor,
} from '../drift/index.js';
import { type SeatView, Verdict } from '../ensembles/index.js';
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
} from '../journal/index.js';
import type { RunConfig } from './config.js';
import {
  GONE_EVICTED,
  GONE_EXPIRED,
  GONE_JOINED,
  type PendingSnapshot,
  PendingStore,
} from './pending-store.js';
import type { Clock, DriftSignal, JournalSink, ScoreBatch, SessionMetrics } from './ports.js';
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
const VERSION = 3;

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
 * - Pending predictions are bounded by count and by age (`labels.pending`, `labels.maxAgeSeconds`);
 *   expiries are returned by `expire()` and counted.
 *
 * Every counter is read through `metrics` (a read-only view for telemetry) and journaled in `window`
 * and `summary` records. `snapshot()` returns the whole state, JSON-safe; `LearningSession.restore`
 * continues exactly where it was taken.
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
  private monitor: InputMonitor | null = null;
  private pending: PendingStore | null = null;
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
    this.metrics = metricsOf(this);
  }

  /** The ensemble (built from the first batch's schema), or null before it. */
  get model(): SessionModel | null {
    return this.ensemble;
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
    const now = this.options.clock.event();
    this.expireAt(now);
    const { values, labels, ids, width } = frame;
    const verdict = this.verdict;
    const monitor = this.monitor;
    const pending = this.pending!;
    const out = this.scores.reserve(from, to - from, ensemble.classes, classes, ids, now);
    const counts = this.counts;
    const settles = ids !== null && this.options.lateLabels !== false;
    for (let r = from; r < to; r++) {
      const offset = r * width;
      if (monitor !== null) {
        const flagged = monitor.update(values, offset);
        if (flagged > 0) this.inputDrift(monitor, flagged);
      }
      counts.scored++;
      const label = labels === null ? Number.NaN : labels[r]!;
      if (Number.isNaN(label)) {
        ensemble.score(values, offset, verdict);
        if (ids !== null && pending.put(ids[r]!, values, offset, verdict, now) === GONE_EVICTED) {
          counts.evictedPredictions++;
        }
      } else {
        ensemble.scoreTrain(values, offset, label, verdict);
        if (settles && pending.settled(ids![r]!) === GONE_EVICTED) counts.evictedPredictions++;
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
    return out;
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
    const now = this.options.clock.event();
    this.expireAt(now);
    const ensemble = this.ensemble;
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
        ensemble!.train(store.rows, store.offsetOf(slot), label);
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
      else counts.unknown++;
      if (trainUnmatched && fate !== GONE_JOINED) {
        ensemble!.train(frame.values, r * frame.width, label);
        counts.trainedUnmatched++;
        counts.trained++;
      }
    }
    return missing;
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
    return {
      kind: KIND,
      version: VERSION,
      config: this.config,
      schema: this.schema,
      ensemble: this.ensemble?.snapshot() ?? null,
      evaluator: this.scorecard.snapshot(),
      monitor: this.monitor?.snapshot() ?? null,
      pending: this.pending?.snapshot() ?? null,
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
  static restore(snapshot: SessionSnapshot, options: Omit<SessionOptions, 'config'>): LearningSession {
    if (!snapshot || snapshot.kind !== KIND || snapshot.version !== VERSION) {
      throw new ShoalError(
        'invalid-snapshot',
        `expected a ${KIND} snapshot of version ${VERSION}, got ${String(snapshot?.kind)} version ${String(snapshot?.version)}`,
      );
    }
    const session = new LearningSession({ ...options, config: snapshot.config });
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
  private ensure(schema: FeatureSchema, classes: readonly string[]): SessionModel {
    if (this.ensemble === null) {
      const { config, version, source, clock, changes } = this.options;
      this.schema = schema;
      this.startedAt = clock.monotonic();
      this.options.journal.write({
        type: 'run',
        version: JOURNAL_VERSION,
        shoal: version,
        startedAt: new Date(clock.wall()).toISOString(),
        source,
        config: config as unknown as Record<string, unknown>,
        schema,
        seed: config.seed,
        ...(changes === undefined || changes === null ? {} : { changes }),
      });
      this.ensemble = createModel(config, schema, (c) => this.lifecycle(c));
      if (config.inputs.monitor) this.monitor = createInputMonitor(schema);
      this.pending = new PendingStore(config.labels.pending, schema.features.length, classes.length);
      this.inputDriftCounts = new Float64Array(schema.features.length);
    } else if (schema.features.length !== this.ensemble.schema.features.length) {
      throw new ShoalError(
        'invalid-input',
        `a frame of ${schema.features.length} features, but the session's schema has ${this.ensemble.schema.features.length}`,
      );
    }
    this.announce(classes);
    return this.ensemble;
  }

  private announce(classes: readonly string[]): void {
    const n = Math.max(1, classes.length);
    if (n > this.ensemble!.classes) {
      this.ensemble!.ensureClasses(n);
      this.scorecard.ensureClasses(n);
    }
    this.pending!.ensureClasses(n);
  }

  private expireAt(now: number): number {
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

  private inputDrift(monitor: InputMonitor, count: number): void {
    const features = this.schema!.features;
    const c = this.counts;
    for (let i = 0; i < count; i++) {
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
  }

  private window(): void {
    this.options.journal.write({
      type: 'window',
      scored: this.counts.scored,
      trained: this.counts.trained,
      window: this.scorecard.windowed(),
      cumulative: this.scorecard.cumulative(),
      seats: this.ensemble!.seats().map((seat) => seat.recentAccuracy),
      labels: this.labelCounts(),
    });
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
    return this.ensemble?.seats() ?? [];
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
