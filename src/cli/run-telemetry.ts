import type { FeatureSchema } from '../core/index.js';
import type { SeatView } from '../ensembles/index.js';
import {
  type JournalRecord,
  type LabelCounts,
  LIFECYCLE_CAUSES,
  type LifecycleCause,
} from '../journal/index.js';
import type { DriftSignal, LearningLoop, SessionMetrics } from '../pipeline/index.js';
import { SessionTelemetry, type TelemetryShape } from '../telemetry/index.js';

/**
 * The metrics surface of a `replay` run's learning loop, read at scrape time, with the counts the loop
 * only journals (lifecycle causes, input drift per feature) taken from its journal records as they are
 * written. The loop keeps labels inline: each is joined the moment its row is scored, nothing waits.
 */
class LoopMetrics implements SessionMetrics {
  private readonly loop: LearningLoop;
  private readonly causes = Object.fromEntries(LIFECYCLE_CAUSES.map((c) => [c, 0])) as Record<
    LifecycleCause,
    number
  >;
  private readonly drifts = new Map<string, number>();
  rejected = 0;

  constructor(loop: LearningLoop) {
    this.loop = loop;
  }

  record(r: JournalRecord): void {
    if (r.type === 'lifecycle') this.causes[r.cause]++;
    else if (r.type === 'input-drift') this.drifts.set(r.feature, (this.drifts.get(r.feature) ?? 0) + 1);
  }

  get scored(): number {
    return this.loop.rows;
  }
  get trained(): number {
    return this.loop.evaluated;
  }
  get judged(): number {
    return this.loop.evaluated;
  }
  get pendingSize(): number {
    return 0;
  }
  get pendingCapacity(): number {
    return 0;
  }
  get windowAccuracy(): number | null {
    return this.loop.recentAccuracy;
  }
  get windowKappa(): number | null {
    return this.loop.recentKappa;
  }
  get epoch(): number {
    return this.causes.promoted + this.causes.fresh;
  }
  labels(): LabelCounts {
    return this.loop.labels();
  }
  lifecycleCounts(): Readonly<Record<LifecycleCause, number>> {
    return { ...this.causes };
  }
  inputDrifts(): ReadonlyMap<string, number> {
    return this.drifts;
  }
  recentDriftSignals(): readonly DriftSignal[] {
    return [];
  }
  seats(): readonly SeatView[] {
    return this.loop.model?.seats() ?? [];
  }
  modelBytes(): number {
    return this.loop.model?.sizeBytes() ?? 0;
  }
}

/**
 * What `replay --metrics` publishes: the loop's metrics through `SessionTelemetry` (`source`). Call
 * `record` with every journal record and `rejected` with the rows the reader could not decode.
 */
export class RunTelemetry {
  readonly source: SessionTelemetry;
  private readonly surface: LoopMetrics;
  private schema: FeatureSchema | null = null;

  constructor(loop: LearningLoop, wall: () => number) {
    this.surface = new LoopMetrics(loop);
    this.source = new SessionTelemetry({ metrics: this.surface, shape: () => this.shape(loop), wall });
  }

  record(r: JournalRecord): void {
    if (r.type === 'run') this.schema = r.schema;
    this.surface.record(r);
    this.source.record(r);
  }

  rejected(count: number): void {
    this.surface.rejected += count;
    this.source.deadLettered('undecodable', count);
  }

  private shape(loop: LearningLoop): TelemetryShape | null {
    const model = loop.model;
    if (model === null || this.schema === null) return null;
    const lifecycle = loop.config.ensemble.lifecycle;
    return {
      ensemble: loop.config.ensemble.kind,
      detector: lifecycle?.enabled === false ? null : (lifecycle?.detector?.kind ?? null),
      seats: model.seats().length,
      features: this.schema.features.map((f) => ({ name: f.name, kind: f.kind })),
      checkpoints: false,
      pending: false,
    };
  }
}
