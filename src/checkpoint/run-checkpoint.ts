import type { Snapshot } from '../core/index.js';

/**
 * The run checkpoint: everything a stopped run needs to go on exactly where it was, in the one snapshot
 * envelope (kind, format version, state): the events decoder's state (vocabularies and class
 * dictionary, so codes mean the same after a restart) and the learning session's snapshot (ensemble,
 * evaluator, input monitor, pending predictions, counters, source positions), with which build wrote
 * it, the fingerprint of the configuration it was run with (a resumed run must use the same), and when
 * it was written. This folder knows only the envelope; the session and the decoder own their parts.
 *
 * @example
 * const checkpoint = runCheckpoint({ decoder: decoder.snapshot(), session: session.snapshot() }, meta);
 * await store.save(checkpoint);
 */
export const CHECKPOINT_KIND = 'run-checkpoint';

/** Format version of the checkpoint (envelope and file layout); bumped when either changes. */
export const CHECKPOINT_VERSION = 1;

export interface CheckpointMeta {
  /** The Shoal version that wrote the checkpoint. */
  readonly shoal: string;
  /** `configFingerprint` of the resolved configuration of the run. */
  readonly fingerprint: string;
  /** ISO 8601 wall time at which it was taken. */
  readonly createdAt: string;
}

/**
 * What a run is made of: the decoder's state and the session's snapshot, each JSON-safe, and the
 * driver's label timing (how labels became known: inline, held back, from a file), which a resumed run
 * must repeat.
 */
export interface RunParts<Decoder = unknown, Session = unknown> {
  readonly decoder: Decoder;
  readonly session: Session;
  readonly labelTiming: unknown;
}

export interface RunState<Decoder = unknown, Session = unknown>
  extends CheckpointMeta,
    RunParts<Decoder, Session> {}

export interface RunCheckpoint<Decoder = unknown, Session = unknown>
  extends Snapshot<RunState<Decoder, Session>> {
  readonly kind: typeof CHECKPOINT_KIND;
}

/** Wrap a run's parts in the run checkpoint envelope. */
export function runCheckpoint<D, S>(parts: RunParts<D, S>, meta: CheckpointMeta): RunCheckpoint<D, S> {
  return {
    kind: CHECKPOINT_KIND,
    version: CHECKPOINT_VERSION,
    state: {
      shoal: meta.shoal,
      fingerprint: meta.fingerprint,
      createdAt: meta.createdAt,
      decoder: parts.decoder,
      session: parts.session,
      labelTiming: parts.labelTiming,
    },
  };
}
