import type { LifecycleCause } from '../journal/index.js';

/**
 * What telemetry reads from a running session, at scrape time. The session (or whatever drives it:
 * `replay`, `serve`) hands telemetry a `TelemetrySource`; nothing here is updated per row. Every label
 * value comes from a closed set below, the fixed feature schema, or a seat index, so the number of
 * series is fixed by the shape of the run, never by its length.
 */

export const SEAT_STATES = ['warming', 'active', 'watched', 'retired'] as const;
export type SeatState = (typeof SEAT_STATES)[number];

/**
 * Why an event could not be scored: the codes `serve` writes in its dead letters' `shoal-reason` header
 * (`DeadLetterCode` in src/kafka) and those of `replay`'s rejects file; a code outside this set is
 * counted as `other`.
 */
export const DEAD_LETTER_REASONS = [
  'empty',
  'oversize',
  'unsupported-content-type',
  'undecodable',
  'schema-mismatch',
  'missing-id',
  'bad-label',
  'bad-value',
  'no-label',
  'no-time',
  'other',
] as const;
export type DeadLetterReason = (typeof DEAD_LETTER_REASONS)[number];

/** The reason a dead-letter code is counted under: itself when in the closed set, else `other`. */
export function deadLetterReason(code: string): DeadLetterReason {
  return (DEAD_LETTER_REASONS as readonly string[]).includes(code) ? (code as DeadLetterReason) : 'other';
}

/**
 * What became of labels: `joined` to their prediction (by id, or inline with their row); `late`, after
 * their prediction expired; `orphaned`, matching no prediction kept (unknown id, or evicted by the count
 * bound); `duplicate`, for an id already joined; and `expired`: predictions that waited in vain (aged out
 * or evicted before any label came).
 */
export const LABEL_OUTCOMES = ['joined', 'expired', 'orphaned', 'late', 'duplicate'] as const;
export type LabelOutcome = (typeof LABEL_OUTCOMES)[number];

/**
 * Member-monitor signals by level and the journal's lifecycle cause (`LIFECYCLE_CAUSES`): a warning that
 * put a member under watch, a drift that retired it, one held back by the replacement cap, and a drift
 * towards fewer errors (nothing replaced).
 */
export const SIGNAL_CAUSES = {
  warning: ['watched'],
  drift: ['drift', 'drift-on-trial', 'drift-deferred', 'drift-ignored-improving'],
} as const satisfies Record<string, readonly LifecycleCause[]>;
export type SignalLevel = keyof typeof SIGNAL_CAUSES;
export type SignalCause = (typeof SIGNAL_CAUSES)[SignalLevel][number];

/** How a seat got its new member: its understudy was promoted, or a fresh member took it. */
export const REPLACEMENT_CAUSES = ['promoted', 'fresh'] as const satisfies readonly LifecycleCause[];
export type ReplacementCause = (typeof REPLACEMENT_CAUSES)[number];

/** The test that flagged an input feature: one per feature kind. */
export const INPUT_DRIFT_CAUSES = { numeric: 'numeric-shift', nominal: 'category-shift' } as const;
export type InputDriftCause = (typeof INPUT_DRIFT_CAUSES)[keyof typeof INPUT_DRIFT_CAUSES];

/** The fixed shape of a run: known once the model is built, unchanged after. */
export interface TelemetryShape {
  readonly ensemble: string;
  /** Kind of each member's drift detector; null when the lifecycle is off. */
  readonly detector: string | null;
  readonly seats: number;
  readonly features: readonly { readonly name: string; readonly kind: keyof typeof INPUT_DRIFT_CAUSES }[];
  /** Whether this run writes checkpoints (their age is published only then). */
  readonly checkpoints: boolean;
  /** Whether this run keeps pending predictions for late labels. */
  readonly pending: boolean;
}

/**
 * A histogram kept by the session with fixed bounds: `counts[i]` observations fell in
 * (bounds[i−1], bounds[i]], `counts[bounds.length]` above the last bound. `sum` is null when the keeper
 * does not track it (the exposition then has no `_sum` line).
 */
export interface HistogramView {
  readonly bounds: readonly number[];
  readonly counts: ArrayLike<number>;
  readonly sum: number | null;
  readonly count: number;
}

export interface SeatReading {
  readonly seat: number;
  readonly member: number;
  readonly state: SeatState;
  /** Rows judged since the member took the seat. */
  readonly age: number;
  /** The member's accuracy over its recent rows; null before any. */
  readonly accuracy: number | null;
}

/** One drift signal, kept for /status (the newest few). */
export interface SignalReading {
  readonly row: number;
  readonly seat: number;
  readonly level: SignalLevel;
  readonly cause: SignalCause;
  /** The monitor's estimate of the member's error rate at the signal. */
  readonly estimate: number;
}

/** Everything telemetry publishes, read once per scrape. Counters are totals since the run started. */
export interface TelemetryReading {
  readonly scored: number;
  readonly trained: number;
  readonly deadLetters: Readonly<Record<DeadLetterReason, number>>;
  /** Ensemble accuracy and Cohen's κ over the evaluation window; null before the first label. */
  readonly accuracy: number | null;
  readonly kappa: number | null;
  readonly seats: readonly SeatReading[];
  /** Signal counts, indexed [seat][level][cause] through `signalCount`. */
  signalCount(seat: number, level: SignalLevel, cause: SignalCause): number;
  readonly replacements: Readonly<Record<ReplacementCause, number>>;
  /** Input-drift signals per feature, in schema order. */
  readonly inputDrift: ArrayLike<number>;
  readonly pending: number;
  readonly pendingCapacity: number;
  /** Labels that came before their event, waiting for it now. */
  readonly early: number;
  readonly labels: Readonly<Record<LabelOutcome, number>>;
  readonly labelDelaySeconds: HistogramView | null;
  /** Consumer lag per assigned partition (empty without a consumer). */
  readonly lag: readonly { readonly topic: string; readonly partition: number; readonly lag: number }[];
  /** Seconds since the last checkpoint (or since the start, before the first); null without checkpoints. */
  readonly checkpointAgeSeconds: number | null;
  readonly modelBytes: number;
  /** The newest drift signals, newest last. */
  readonly recentSignals: readonly SignalReading[];
}

/**
 * What a session exposes to telemetry: its shape once the model exists (null before), and a reading
 * taken when asked.
 */
export interface TelemetrySource {
  shape(): TelemetryShape | null;
  read(): TelemetryReading;
}
