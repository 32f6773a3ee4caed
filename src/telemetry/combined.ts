import {
  DEAD_LETTER_REASONS,
  type DeadLetterReason,
  deadLetterReason,
  LABEL_OUTCOMES,
  type LabelOutcome,
  REPLACEMENT_CAUSES,
  type ReplacementCause,
  SEAT_STATES,
  type SeatReading,
  SIGNAL_CAUSES,
  type SignalCause,
  type SignalLevel,
  type SignalReading,
  type TelemetryReading,
  type TelemetryShape,
  type TelemetrySource,
} from './source.js';

const CAUSES: readonly SignalCause[] = (Object.keys(SIGNAL_CAUSES) as SignalLevel[]).flatMap(
  (l) => SIGNAL_CAUSES[l],
);
/** The newest drift signals kept for /status across every session. */
const RECENT_SIGNALS = 10;

function zeros<K extends string>(keys: readonly K[]): Record<K, number> {
  return Object.fromEntries(keys.map((k) => [k, 0])) as Record<K, number>;
}

/** Counter totals of one or more sessions (what must never fall when a session goes away). */
class Totals {
  scored = 0;
  trained = 0;
  readonly labels = zeros<LabelOutcome>(LABEL_OUTCOMES);
  readonly replacements = zeros<ReplacementCause>(REPLACEMENT_CAUSES);
  inputDrift: number[] = [];
  /** signals[seat × CAUSES.length + cause index]. */
  signals: number[] = [];
  delayBounds: readonly number[] = [];
  delayCounts: number[] = [];
  delaySum = 0;
  delayCount = 0;

  add(r: TelemetryReading, shape: TelemetryShape | null): void {
    this.scored += r.scored;
    this.trained += r.trained;
    for (const o of LABEL_OUTCOMES) this.labels[o] += r.labels[o];
    for (const c of REPLACEMENT_CAUSES) this.replacements[c] += r.replacements[c];
    for (let i = 0; i < r.inputDrift.length; i++)
      this.inputDrift[i] = (this.inputDrift[i] ?? 0) + r.inputDrift[i]!;
    if (shape !== null) {
      for (let seat = 0; seat < shape.seats; seat++) {
        for (const level of Object.keys(SIGNAL_CAUSES) as SignalLevel[]) {
          for (const cause of SIGNAL_CAUSES[level]) {
            const at = seat * CAUSES.length + CAUSES.indexOf(cause);
            this.signals[at] = (this.signals[at] ?? 0) + r.signalCount(seat, level, cause);
          }
        }
      }
    }
    const d = r.labelDelaySeconds;
    if (d !== null) {
      this.delayBounds = d.bounds;
      for (let i = 0; i < d.counts.length; i++)
        this.delayCounts[i] = (this.delayCounts[i] ?? 0) + d.counts[i]!;
      this.delaySum += d.sum ?? 0;
      this.delayCount += d.count;
    }
  }

  copy(): Totals {
    const t = new Totals();
    t.scored = this.scored;
    t.trained = this.trained;
    Object.assign(t.labels, this.labels);
    Object.assign(t.replacements, this.replacements);
    t.inputDrift = [...this.inputDrift];
    t.signals = [...this.signals];
    t.delayBounds = this.delayBounds;
    t.delayCounts = [...this.delayCounts];
    t.delaySum = this.delaySum;
    t.delayCount = this.delayCount;
    return t;
  }
}

/**
 * One `TelemetrySource` over the sessions of a service: one session with scope `global`, one per
 * assigned partition with scope `partition`. Counters are summed over the sessions, and the totals of a
 * session dropped on revoke stay in the sums, so no counter ever falls (Prometheus would read a fall as a
 * reset). Gauges of the model: accuracy, κ and per-seat accuracy are the mean over the sessions that have
 * one; a seat's state is the furthest along `SEAT_STATES` any session's seat is in; pending counts, labels
 * held for their events and model bytes are sums. Dead letters by reason and the consumer lag per partition are kept here, since
 * the consumer sees them, not a session. Label sets stay those of one session: seat indices, the fixed
 * schema, closed sets, and the partitions of the events topics.
 *
 * @example
 * const telemetry = new ServeTelemetry();
 * telemetry.add('legs/0', SessionTelemetry.of(session, { checkpoints: false, wall }));
 * telemetry.setLag('legs', 0, 120);   // once per batch
 * telemetry.drop('legs/0');           // partition revoked
 */
export class ServeTelemetry implements TelemetrySource {
  private readonly sessions = new Map<string, TelemetrySource>();
  private readonly retired = new Totals();
  private lastShape: TelemetryShape | null = null;
  private readonly deadLetters = zeros<DeadLetterReason>(DEAD_LETTER_REASONS);
  private readonly lag = new Map<string, { topic: string; partition: number; lag: number }>();

  add(key: string, source: TelemetrySource): void {
    this.sessions.set(key, source);
  }

  /** A session goes away: its counter totals stay in the sums. */
  drop(key: string): void {
    const source = this.sessions.get(key);
    if (source === undefined) return;
    this.retired.add(source.read(), source.shape());
    this.sessions.delete(key);
  }

  /** Count dead-lettered inputs by their code (codes outside the closed set count as `other`). */
  deadLettered(code: string): void {
    this.deadLetters[deadLetterReason(code)]++;
  }

  /** The lag of one partition after a batch: its high watermark minus the next offset to read. */
  setLag(topic: string, partition: number, lag: number): void {
    const key = `${topic}/${partition}`;
    const entry = this.lag.get(key);
    if (entry === undefined) this.lag.set(key, { topic, partition, lag });
    else entry.lag = lag;
  }

  /** Forget the lag of partitions no longer assigned (`topic/partition` names kept). */
  keepLag(streams: readonly string[]): void {
    for (const key of [...this.lag.keys()]) if (!streams.includes(key)) this.lag.delete(key);
  }

  shape(): TelemetryShape | null {
    for (const source of this.sessions.values()) {
      const shape = source.shape();
      if (shape !== null) {
        this.lastShape = shape;
        break;
      }
    }
    return this.lastShape;
  }

  read(): TelemetryReading {
    const shape = this.shape();
    const totals = this.retired.copy();
    const readings = [...this.sessions.values()].map((s) => s.read());
    for (const r of readings) totals.add(r, shape);
    const signals = totals.signals;
    const recent = readings.flatMap((r) => r.recentSignals).sort((a, b) => a.row - b.row);
    return {
      scored: totals.scored,
      trained: totals.trained,
      deadLetters: { ...this.deadLetters },
      accuracy: mean(readings.map((r) => r.accuracy)),
      kappa: mean(readings.map((r) => r.kappa)),
      seats: seats(readings),
      signalCount: (seat, _level, cause) => signals[seat * CAUSES.length + CAUSES.indexOf(cause)] ?? 0,
      replacements: totals.replacements,
      inputDrift: totals.inputDrift,
      pending: readings.reduce((n, r) => n + r.pending, 0),
      pendingCapacity: readings.reduce((n, r) => n + r.pendingCapacity, 0),
      early: readings.reduce((n, r) => n + r.early, 0),
      labels: totals.labels,
      labelDelaySeconds:
        totals.delayCounts.length === 0
          ? null
          : {
              bounds: totals.delayBounds,
              counts: totals.delayCounts,
              sum: totals.delaySum,
              count: totals.delayCount,
            },
      lag: [...this.lag.values()].map((l) => ({ ...l })),
      checkpointAgeSeconds: readings.reduce<number | null>(
        (oldest, r) =>
          r.checkpointAgeSeconds === null ? oldest : Math.max(oldest ?? 0, r.checkpointAgeSeconds),
        null,
      ),
      modelBytes: readings.reduce((n, r) => n + r.modelBytes, 0),
      recentSignals: recent.slice(-RECENT_SIGNALS) as SignalReading[],
    };
  }
}

function mean(values: readonly (number | null)[]): number | null {
  let sum = 0;
  let n = 0;
  for (const v of values) {
    if (v === null) continue;
    sum += v;
    n++;
  }
  return n === 0 ? null : sum / n;
}

/** Seat by seat over the sessions: mean accuracy, the furthest state, the youngest member. */
function seats(readings: readonly TelemetryReading[]): SeatReading[] {
  if (readings.length === 1) return [...readings[0]!.seats];
  const out: SeatReading[] = [];
  const count = Math.max(0, ...readings.map((r) => r.seats.length));
  for (let seat = 0; seat < count; seat++) {
    const at = readings.map((r) => r.seats[seat]).filter((s) => s !== undefined);
    const state = SEAT_STATES[Math.max(...at.map((s) => SEAT_STATES.indexOf(s.state)))]!;
    const youngest = at.reduce((a, b) => (b.age < a.age ? b : a));
    out.push({
      seat,
      member: youngest.member,
      state,
      age: youngest.age,
      accuracy: mean(at.map((s) => s.accuracy)),
    });
  }
  return out;
}
