import type { FeatureSchema } from '../core/index.js';
import type { BatchVerdicts, EnsembleSnapshot, SeatView } from '../ensembles/index.js';
import type { Frame, Rejection, ScoreRows } from '../frames/index.js';
import type { JournalRecord, LabelCounts, LifecycleCause } from '../journal/index.js';

/**
 * The ports of a `LearningSession`: plain interfaces the session takes and never implements. Files
 * (`src/files/`), Kafka (`src/kafka/`) and tests provide the implementations; the session itself does no
 * I/O, reads no clock of its own and keeps no global state, so `replay`, `serve` and `demo` run the same
 * scoring, joining, training and lifecycle code and differ only in the adapters they plug in.
 *
 * Positions are 64-bit (`bigint`, `BigInt64Array`): a Kafka offset is an int64, and a file of more than
 * 2³¹ rows must still be resumable.
 */

/**
 * An ensemble whose members train on worker threads, a batch of rows at a time, with verdicts, lifecycle
 * changes and snapshots identical to the same ensemble in one thread (src/parallel's `ParallelBagging`).
 * `scoreTrainBatch` scores every row and trains on each row whose label is not NaN; while it runs the
 * caller's thread is free. Between batches its figures (`seats`, `sizeBytes`) are those after the last.
 */
export interface ThreadedEnsemble {
  readonly schema: FeatureSchema;
  readonly classes: number;
  readonly epoch: number;
  readonly rows: number;
  ensureClasses(n: number): void;
  seats(): SeatView[];
  sizeBytes(): number;
  scoreTrainBatch(
    values: Float64Array,
    labels: ArrayLike<number>,
    rows: number,
    out: BatchVerdicts,
  ): Promise<void>;
  snapshot(): Promise<EnsembleSnapshot>;
  close(): Promise<void>;
}

/** Puts an ensemble (given as its snapshot) on `threads` worker threads. */
export type EnsembleThreads = (snapshot: EnsembleSnapshot, threads: number) => Promise<ThreadedEnsemble>;

/**
 * Where reading resumes: for each stream of a source (a Kafka topic-partition such as `events/3`, or a
 * file path), the position of the next row to read.
 */
export type Positions = ReadonlyMap<string, bigint>;

/** One batch from a source: the rows that decoded, those that did not, and where each came from. */
export interface SourceBatch {
  /** The decoded rows; `frame.ids` holds each row's event id when the source names an id column. */
  readonly frame: Frame;
  /** Rows or messages that could not be decoded, as values (the driver dead-letters them). */
  readonly rejected: readonly Rejection[];
  /** The stream these rows came from (one topic-partition, one file). */
  readonly stream: string;
  /** Source position of each row of `frame` (Kafka offset, row index in a file): `frame.rows` entries. */
  readonly positions: BigInt64Array;
  /** The position to resume `stream` from once this batch is fully handled. */
  readonly next: bigint;
}

/**
 * Events to score: an async iterable of batches, opened at given positions (empty = from the start).
 *
 * @example
 * for await (const batch of source.open(new Map())) session.score(batch.frame);
 */
export interface Source {
  /** What the source reads, for the journal (a path, `topic@brokers`). */
  readonly name: string;
  open(from: Positions): AsyncIterable<SourceBatch>;
}

/**
 * Labels that arrive on their own (a labels file, a labels topic): batches whose frame carries `ids`
 * and `labels` (class codes from a decoder that shares the events decoder's class dictionary) and, when
 * the label carries its row, the feature values (`frame.width` equal to the events' width; 0 otherwise).
 */
export interface LabelSource {
  readonly name: string;
  open(from: Positions): AsyncIterable<SourceBatch>;
}

/**
 * The scores of one batch, in buffers the session reuses: valid until its next `score` call. Row r's
 * class probabilities are `probabilities[r × classes … (r + 1) × classes)`. The fields are those of
 * `ScoreRows` (defined beside the Arrow encoder of scores, which frames/ owns).
 */
export type ScoreBatch = ScoreRows;

/** Where scores go (a scores topic, a file). `flush` resolves when everything written is durable. */
export interface ScoreSink {
  write(scores: ScoreBatch, batch: SourceBatch): void;
  flush(): Promise<void>;
}

/** An input that could not be used, with where it came from and why. */
export interface DeadLetter {
  readonly stream: string;
  /** Source position (Kafka offset, line or row index), or −1 when unknown. */
  readonly position: bigint;
  /** A short machine-readable reason (`undecodable`, `schema-mismatch`, `missing-id`, …). */
  readonly code: string;
  /** A complete message for people: what was wrong and where. */
  readonly reason: string;
  /** The original bytes, when the source had them. */
  readonly bytes: Uint8Array | null;
}

export interface DeadLetterSink {
  write(letter: DeadLetter): void;
  flush(): Promise<void>;
}

/** Where the journal goes (a file, a topic, memory). Records are written in the order they happen. */
export interface JournalSink {
  write(record: JournalRecord): void;
  flush(): Promise<void>;
}

/**
 * Where run checkpoints are kept. A checkpoint is a JSON-safe value; `save` resolves only once it is
 * durable. `latest` returns the newest one that reads back whole and is compatible; each one it had to
 * refuse (corrupt, cut short, another format) is named with its reason in `refused`.
 */
export interface CheckpointStore {
  save(checkpoint: unknown): Promise<string>;
  latest(): Promise<StoredCheckpoint | null>;
}

export interface StoredCheckpoint {
  /** Where it was read from (a file path, a topic offset). */
  readonly where: string;
  readonly checkpoint: unknown;
  /** Newer checkpoints that were refused, each with where and why. */
  readonly refused: readonly string[];
}

/** The system's clocks, as a driver reads them: for durations and wall-clock metadata only. */
export interface Timer {
  /** Milliseconds from any fixed origin, never going back (for durations and rates). */
  monotonic(): number;
  /** Milliseconds since 1970-01-01 UTC (when a run started). */
  wall(): number;
}

/**
 * Time, injected: the session never reads the system clock itself. Its own time, `event()`, dates each
 * pending prediction, bounds their age and measures label delays: in a replay it is the stream's own
 * time (`EventClock`, moved on by the driver), so two replays of one file are bit for bit alike; in
 * live serving it is the wall clock (`liveClock`). `monotonic` and `wall` give only wall-clock metadata
 * (the run's start, its seconds and rows per second), which is never part of the model's state.
 *
 * @example
 * const clock: Clock = liveClock({ monotonic: () => performance.now(), wall: () => Date.now() });
 */
export interface Clock extends Timer {
  /** The session's time, in milliseconds: the stream's time in a replay, the wall clock when live. */
  event(): number;
}

/** One drift signal of a member monitor, as the metrics surface keeps the recent ones. */
export interface DriftSignal {
  readonly scored: number;
  readonly trained: number;
  readonly seat: number;
  readonly member: number;
  readonly detector: string;
  readonly cause: LifecycleCause;
  readonly estimate: number;
}

/**
 * What telemetry reads from a session at scrape time (never updated per row by the telemetry layer).
 * Every member is read-only; methods build their answer when called, so a scrape costs what it reads.
 */
export interface SessionMetrics {
  /** Rows scored, rows trained on, rows judged (a label joined to its served prediction). */
  readonly scored: number;
  readonly trained: number;
  readonly judged: number;
  /** Rows the driver reported as rejected (dead-lettered) through `session.reject`. */
  readonly rejected: number;
  /** Label outcomes and pending predictions so far. */
  labels(): LabelCounts;
  /** Predictions waiting for a label now, and the store's count bound. */
  readonly pendingSize: number;
  readonly pendingCapacity: number;
  /**
   * Joined labels by delay from serving to joining: `counts[k]` labels took at most `bounds[k]` seconds
   * (and more than the bound before); the last count is beyond the last bound; `sum` is the total delay
   * in seconds.
   */
  labelDelays(): {
    readonly bounds: readonly number[];
    readonly counts: readonly number[];
    readonly sum: number;
  };
  /** Accuracy and Cohen's κ over the evaluation window; null before the first judged row. */
  readonly windowAccuracy: number | null;
  readonly windowKappa: number | null;
  /** Lifecycle changes so far by cause (every cause present, zero when none happened). */
  lifecycleCounts(): Readonly<Record<LifecycleCause, number>>;
  /** Input-drift flags so far, by feature name. */
  inputDrifts(): ReadonlyMap<string, number>;
  /** The most recent member drift signals, oldest first (a bounded number). */
  recentDriftSignals(): readonly DriftSignal[];
  /** The seats as they are now. */
  seats(): readonly SeatView[];
  /** Seat replacements so far (the epoch served with each score). */
  readonly epoch: number;
  /** Estimated model size in bytes. */
  modelBytes(): number;
}
