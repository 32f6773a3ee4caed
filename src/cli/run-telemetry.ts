import type { FeatureSchema } from '../core/index.js';
import type { LifecycleRecord } from '../ensembles/index.js';
import type { JournalRecord, LearningLoop } from '../pipeline/index.js';
import {
  DEAD_LETTER_REASONS,
  type DeadLetterReason,
  type ReplacementCause,
  SIGNAL_CAUSES,
  type SignalCause,
  type SignalLevel,
  type SignalReading,
  type TelemetryReading,
  type TelemetryShape,
  type TelemetrySource,
} from '../telemetry/index.js';

/** Drift signals kept for /status. */
const RECENT_SIGNALS = 20;
const LEVELS = Object.keys(SIGNAL_CAUSES) as SignalLevel[];
const CAUSES: readonly SignalCause[] = LEVELS.flatMap((l) => SIGNAL_CAUSES[l]);

/**
 * What a `replay` run publishes: the loop's counters and views, read when scraped, plus tallies of the
 * journal's lifecycle and input-drift records (rare events, counted as they are written — never per row).
 *
 * The lifecycle record's cause is read from its `reason` here until the journal carries a typed cause.
 */
export class RunTelemetry implements TelemetrySource {
  private readonly loop: LearningLoop;
  private schema: FeatureSchema | null = null;
  /** signals[(seat × CAUSES.length) + cause index] */
  private signals = new Float64Array(0);
  private inputDrift = new Float64Array(0);
  private readonly replacements: Record<ReplacementCause, number> = { promoted: 0, fresh: 0 };
  private readonly deadLetters: Record<DeadLetterReason, number> = Object.fromEntries(
    DEAD_LETTER_REASONS.map((r) => [r, 0]),
  ) as Record<DeadLetterReason, number>;
  private readonly recent: SignalReading[] = [];

  constructor(loop: LearningLoop) {
    this.loop = loop;
  }

  /** Tap the journal: call with every record the loop writes. */
  record(r: JournalRecord): void {
    if (r.type === 'run') {
      this.schema = r.schema;
      this.inputDrift = new Float64Array(r.schema.features.length);
    } else if (r.type === 'lifecycle') {
      this.lifecycle(r);
    } else if (r.type === 'input-drift') {
      const i = this.schema?.features.findIndex((f) => f.name === r.feature) ?? -1;
      if (i >= 0) this.inputDrift[i]!++;
    }
  }

  /** Count rows the reader could not decode. */
  rejected(count: number): void {
    this.deadLetters.undecodable += count;
  }

  shape(): TelemetryShape | null {
    const model = this.loop.model;
    if (model === null || this.schema === null) return null;
    const lifecycle = this.loop.config.ensemble.lifecycle;
    return {
      ensemble: this.loop.config.ensemble.kind,
      detector: lifecycle?.enabled === false ? null : (lifecycle?.detector?.kind ?? null),
      seats: model.seats().length,
      features: this.schema.features.map((f) => ({ name: f.name, kind: f.kind })),
      checkpoints: false,
      pending: false,
    };
  }

  read(): TelemetryReading {
    const loop = this.loop;
    const model = loop.model;
    const signals = this.signals;
    return {
      scored: loop.rows,
      trained: loop.evaluated,
      deadLetters: { ...this.deadLetters },
      accuracy: loop.recentAccuracy,
      kappa: loop.recentKappa,
      seats: (model?.seats() ?? []).map((s) => ({
        seat: s.seat,
        member: s.member,
        state: s.state,
        age: s.age,
        accuracy: s.age > 0 ? s.recentAccuracy : null,
      })),
      signalCount: (seat, _level, cause) => signals[seat * CAUSES.length + CAUSES.indexOf(cause)] ?? 0,
      replacements: { ...this.replacements },
      inputDrift: this.inputDrift.slice(),
      // Inline labels are joined the moment their row is scored: nothing waits, nothing is lost.
      pending: 0,
      pendingCapacity: 0,
      labels: { joined: loop.evaluated, expired: 0, orphaned: 0, late: 0 },
      labelDelaySeconds: null,
      lag: [],
      checkpointAgeSeconds: null,
      modelBytes: model?.sizeBytes() ?? 0,
      recentSignals: [...this.recent],
    };
  }

  private lifecycle(r: LifecycleRecord): void {
    if (r.from === null) {
      if (r.reason === 'understudy promoted') this.replacements.promoted++;
      else if (r.reason === 'fresh member') this.replacements.fresh++;
      return;
    }
    const signal = signalOf(r);
    if (signal === null) return;
    const [level, cause] = signal;
    const need = (r.seat + 1) * CAUSES.length;
    if (this.signals.length < need) {
      const grown = new Float64Array(need);
      grown.set(this.signals);
      this.signals = grown;
    }
    this.signals[r.seat * CAUSES.length + CAUSES.indexOf(cause)]!++;
    this.recent.push({ row: r.row, seat: r.seat, level, cause, estimate: r.estimate });
    if (this.recent.length > RECENT_SIGNALS) this.recent.shift();
  }
}

/** The monitor signal a lifecycle record reports, if any. */
function signalOf(r: LifecycleRecord): [SignalLevel, SignalCause] | null {
  if (r.to === 'watched') return ['warning', 'watched'];
  if (r.to === 'retired') return ['drift', 'drift'];
  if (r.reason.startsWith('drift; replacement deferred')) return ['drift', 'drift-deferred'];
  if (r.reason === 'drift towards fewer errors') return ['drift', 'drift-improved'];
  return null;
}
