import type { FeatureSchema } from '../core/index.js';
import type { JournalRecord, LifecycleRecord } from '../journal/index.js';
import type { LearningSession, SessionMetrics } from '../pipeline/index.js';
import {
  DEAD_LETTER_REASONS,
  type DeadLetterReason,
  deadLetterReason,
  type HistogramView,
  SIGNAL_CAUSES,
  type SignalCause,
  type SignalLevel,
  type SignalReading,
  type TelemetryReading,
  type TelemetryShape,
  type TelemetrySource,
} from './source.js';

/** The session's label-delay buckets as a histogram view. */
function delayView(d: ReturnType<SessionMetrics['labelDelays']>): HistogramView {
  let count = 0;
  for (const c of d.counts) count += c;
  return { bounds: d.bounds, counts: d.counts, sum: d.sum, count };
}

const LEVELS = Object.keys(SIGNAL_CAUSES) as SignalLevel[];
const CAUSES: readonly SignalCause[] = LEVELS.flatMap((l) => SIGNAL_CAUSES[l]);
const LEVEL_OF = new Map<string, SignalLevel>(LEVELS.flatMap((l) => SIGNAL_CAUSES[l].map((c) => [c, l])));

/** What the driver of a session knows and the session does not: its shape, the lag, checkpoints. */
export interface SessionTelemetryOptions {
  /** The session's read-only metrics surface. */
  readonly metrics: SessionMetrics;
  /** The run's shape once its model exists, null before. */
  readonly shape: () => TelemetryShape | null;
  /** Wall-clock milliseconds (for the checkpoint age). */
  readonly wall: () => number;
}

/**
 * A `TelemetrySource` over a session's `SessionMetrics`, read at scrape time, plus what only the driver
 * sees: dead letters by reason, consumer lag, checkpoint times. The surface counts lifecycle causes for
 * the whole ensemble; the per-seat signal counts come from the journal's lifecycle records (their typed
 * `cause`), counted as each record is written — member changes are rare events, never one per row.
 *
 * @example
 * const source = new SessionTelemetry({ metrics: session.metrics, shape, wall: () => Date.now() });
 * journal = tee(journal, (r) => source.record(r));
 * const server = new TelemetryServer(source, { port: 9470, version, readiness: ['model'] });
 */
export class SessionTelemetry implements TelemetrySource {
  private readonly options: SessionTelemetryOptions;
  /** signals[seat × CAUSES.length + cause index], grown as seats appear. */
  private signals = new Float64Array(0);
  private readonly deadLetters = Object.fromEntries(DEAD_LETTER_REASONS.map((r) => [r, 0])) as Record<
    DeadLetterReason,
    number
  >;
  private lag: TelemetryReading['lag'] = [];
  private lastCheckpoint: number;
  private runSchema: FeatureSchema | null = null;

  constructor(options: SessionTelemetryOptions) {
    this.options = options;
    this.lastCheckpoint = options.wall();
  }

  /**
   * Telemetry for a `LearningSession`: its metrics surface, and a shape taken from its configuration,
   * its model and the schema of the journal's `run` record. `checkpoints` says whether the driver
   * writes checkpoints (and calls `checkpointed()`). Show it every journal record (`record`): the
   * session writes its `run` record when it scores its first rows.
   *
   * @example
   * let telemetry: SessionTelemetry | null = null;
   * const session = new LearningSession({ …, journal: { write: (r) => { telemetry?.record(r); out.write(r); }, flush } });
   * telemetry = SessionTelemetry.of(session, { checkpoints: false, wall: () => Date.now() });
   */
  static of(
    session: LearningSession,
    options: { readonly checkpoints: boolean; readonly wall: () => number },
  ): SessionTelemetry {
    let made: SessionTelemetry | null = null;
    const shape = (): TelemetryShape | null => {
      const schema = made?.runSchema ?? null;
      const model = session.model;
      if (model === null || schema === null) return null;
      const spec = session.config.ensemble;
      const lifecycle = 'lifecycle' in spec ? spec.lifecycle : undefined;
      return {
        ensemble: spec.kind,
        detector: lifecycle?.enabled === false ? null : (lifecycle?.detector?.kind ?? null),
        seats: model.seats().length,
        features: schema.features.map((f) => ({ name: f.name, kind: f.kind })),
        checkpoints: options.checkpoints,
        pending: true,
      };
    };
    made = new SessionTelemetry({ metrics: session.metrics, shape, wall: options.wall });
    return made;
  }

  /** Tap the journal: call with every record the session writes. */
  record(r: JournalRecord): void {
    if (r.type === 'run') this.runSchema = r.schema;
    else if (r.type === 'lifecycle') this.lifecycle(r);
  }

  /** Count dead-lettered inputs by their code (codes outside the closed set count as `other`). */
  deadLettered(code: string, count = 1): void {
    this.deadLetters[deadLetterReason(code)] += count;
  }

  /** The consumer's lag per assigned partition, as last measured. */
  setLag(lag: TelemetryReading['lag']): void {
    this.lag = lag;
  }

  /** A checkpoint was written now. */
  checkpointed(): void {
    this.lastCheckpoint = this.options.wall();
  }

  shape(): TelemetryShape | null {
    return this.options.shape();
  }

  read(): TelemetryReading {
    const m = this.options.metrics;
    const labels = m.labels();
    const signals = this.signals;
    const drifts = m.inputDrifts();
    const causes = m.lifecycleCounts();
    const features = this.options.shape()?.features ?? [];
    return {
      scored: m.scored,
      trained: m.trained,
      deadLetters: { ...this.deadLetters },
      accuracy: m.windowAccuracy,
      kappa: m.windowKappa,
      seats: m.seats().map((s) => ({
        seat: s.seat,
        member: s.member,
        state: s.state,
        age: s.age,
        accuracy: s.age > 0 && Number.isFinite(s.recentAccuracy) ? s.recentAccuracy : null,
      })),
      signalCount: (seat, _level, cause) => signals[seat * CAUSES.length + CAUSES.indexOf(cause)] ?? 0,
      replacements: { promoted: causes.promoted, fresh: causes.fresh },
      inputDrift: features.map((f) => drifts.get(f.name) ?? 0),
      pending: m.pendingSize,
      pendingCapacity: m.pendingCapacity,
      early: labels.held,
      labels: {
        joined: labels.joined + labels.inline,
        expired: labels.expiredPredictions + labels.evictedPredictions,
        orphaned: labels.unknown + labels.evicted,
        late: labels.late,
        duplicate: labels.duplicate,
      },
      labelDelaySeconds: delayView(m.labelDelays()),
      lag: this.lag,
      checkpointAgeSeconds: Math.max(0, (this.options.wall() - this.lastCheckpoint) / 1000),
      modelBytes: m.modelBytes(),
      recentSignals: m.recentDriftSignals().map(
        (d): SignalReading => ({
          row: d.scored,
          seat: d.seat,
          level: LEVEL_OF.get(d.cause) ?? 'drift',
          cause: d.cause as SignalCause,
          estimate: d.estimate,
        }),
      ),
    };
  }

  private lifecycle(r: LifecycleRecord): void {
    if (!LEVEL_OF.has(r.cause)) return;
    const cause = r.cause as SignalCause;
    const need = (r.seat + 1) * CAUSES.length;
    if (this.signals.length < need) {
      const grown = new Float64Array(need);
      grown.set(this.signals);
      this.signals = grown;
    }
    this.signals[r.seat * CAUSES.length + CAUSES.indexOf(cause)]!++;
  }
}
