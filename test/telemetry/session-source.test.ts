import { describe, expect, it } from 'vitest';
import { LIFECYCLE_CAUSES, type LifecycleCause, type LifecycleRecord } from '../../src/journal/index.js';
import type { DeadLetterCode } from '../../src/kafka/index.js';
import type { SessionMetrics } from '../../src/pipeline/index.js';
import { SessionTelemetry, type TelemetryShape } from '../../src/telemetry/index.js';

/**
 * How SessionTelemetry turns a session's metrics surface into what is published. The surface here is a
 * fixed reading (the session that implements it is another module's; `test/telemetry/endpoint.test.ts`
 * runs a real learning loop through the same class).
 */
const surface: SessionMetrics = {
  scored: 1000,
  trained: 900,
  judged: 880,
  rejected: 3,
  labels: () => ({
    inline: 5,
    joined: 870,
    duplicate: 4,
    late: 6,
    evicted: 2,
    unknown: 7,
    early: 12,
    held: 3,
    trainedUnmatched: 0,
    expiredPredictions: 9,
    evictedPredictions: 1,
    pending: 40,
  }),
  pendingSize: 40,
  pendingCapacity: 100,
  labelDelays: () => ({ bounds: [1, 10], counts: [800, 60, 10], sum: 2345 }),
  windowAccuracy: 0.9,
  windowKappa: 0.8,
  lifecycleCounts: () =>
    ({ ...Object.fromEntries(LIFECYCLE_CAUSES.map((c) => [c, 0])), promoted: 3, fresh: 1 }) as Record<
      LifecycleCause,
      number
    >,
  inputDrifts: () => new Map([['x1', 2]]),
  recentDriftSignals: () => [
    { scored: 500, trained: 480, seat: 1, member: 11, detector: 'adwin', cause: 'drift', estimate: 0.4 },
    {
      scored: 520,
      trained: 500,
      seat: 0,
      member: 10,
      detector: 'adwin',
      cause: 'drift-ignored-improving',
      estimate: 0.1,
    },
  ],
  seats: () => [],
  epoch: 0,
  modelBytes: () => 1234,
};

const shape: TelemetryShape = {
  ensemble: 'bagging',
  detector: 'adwin',
  seats: 2,
  features: [
    { name: 'x0', kind: 'numeric' },
    { name: 'x1', kind: 'numeric' },
  ],
  checkpoints: true,
  pending: true,
};

function change(seat: number, cause: LifecycleCause): LifecycleRecord {
  return {
    type: 'lifecycle',
    trained: 10,
    scored: 12,
    seat,
    member: seat,
    learner: 'hoeffding-tree',
    from: 'active',
    to: 'active',
    cause,
    detector: 'adwin',
    estimate: 0.3,
    reason: cause,
  };
}

describe('SessionTelemetry', () => {
  it('maps every label outcome of the session onto the published ones, losing none', () => {
    let now = 5000;
    const source = new SessionTelemetry({ metrics: surface, shape: () => shape, wall: () => now });
    const r = source.read();
    expect(r.labels).toEqual({ joined: 875, expired: 10, orphaned: 9, late: 6, duplicate: 4 });
    // Every label received is counted once (journal's LabelCounts): inline + joined + duplicate + late +
    // evicted + unknown = 894, and the published label outcomes add up to the same.
    expect(r.labels.joined + r.labels.orphaned + r.labels.late + r.labels.duplicate).toBe(
      5 + 870 + 4 + 6 + 2 + 7,
    );
    // Labels still held for their events are published apart, as a gauge.
    expect(r.early).toBe(3);
    expect(Array.from(r.inputDrift)).toEqual([0, 2]);
    expect(r.labelDelaySeconds).toEqual({ bounds: [1, 10], counts: [800, 60, 10], sum: 2345, count: 870 });
    expect(r.checkpointAgeSeconds).toBe(0);
    now += 90_000;
    expect(source.read().checkpointAgeSeconds).toBe(90);
    source.checkpointed();
    expect(source.read().checkpointAgeSeconds).toBe(0);
  });

  it('counts drift signals per seat and cause from the journal; replacements, recent signals from the surface', () => {
    const source = new SessionTelemetry({ metrics: surface, shape: () => shape, wall: () => 0 });
    for (const [seat, cause] of [
      [0, 'watched'],
      [1, 'drift'],
      [1, 'drift'],
      [1, 'drift-deferred'],
      [0, 'drift-ignored-improving'],
      [1, 'promoted'],
      [0, 'fresh'],
      [0, 'warmed'],
    ] as const)
      source.record(change(seat, cause));
    source.deadLettered('schema-mismatch');
    source.deadLettered('no-such-code', 2);
    const r = source.read();
    expect(r.signalCount(0, 'warning', 'watched')).toBe(1);
    expect(r.signalCount(1, 'drift', 'drift')).toBe(2);
    expect(r.signalCount(1, 'drift', 'drift-deferred')).toBe(1);
    expect(r.signalCount(0, 'drift', 'drift-ignored-improving')).toBe(1);
    expect(r.signalCount(0, 'drift', 'drift')).toBe(0);
    expect(r.replacements).toEqual({ promoted: 3, fresh: 1 });
    expect(r.recentSignals).toEqual([
      { row: 500, seat: 1, level: 'drift', cause: 'drift', estimate: 0.4 },
      { row: 520, seat: 0, level: 'drift', cause: 'drift-ignored-improving', estimate: 0.1 },
    ]);
    expect(r.deadLetters['schema-mismatch']).toBe(1);
    expect(r.deadLetters.other).toBe(2);
  });

  it('counts every dead-letter code serve writes under a reason of its own, not as other', () => {
    // A record keyed by the kafka adapters' code type: the typecheck fails when serve gains a code this
    // list lacks.
    const serveCodes: Record<DeadLetterCode, true> = {
      empty: true,
      oversize: true,
      'unsupported-content-type': true,
      undecodable: true,
      'schema-mismatch': true,
      'missing-id': true,
      'bad-label': true,
      'bad-value': true,
    };
    const source = new SessionTelemetry({ metrics: surface, shape: () => shape, wall: () => 0 });
    for (const code of Object.keys(serveCodes)) source.deadLettered(code);
    const r = source.read();
    for (const code of Object.keys(serveCodes)) expect(r.deadLetters[code as DeadLetterCode], code).toBe(1);
    expect(r.deadLetters.other).toBe(0);
  });
});
