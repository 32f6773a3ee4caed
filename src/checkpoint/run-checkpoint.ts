import type { Snapshot } from '../core/index.js';

/**
 * The run checkpoint: everything a stopped run needs to go on exactly where it was, in the one snapshot
 * envelope (kind, format version, state). Besides the learning session's own snapshot — decoder
 * vocabularies and class dictionary, ensemble, evaluator, input monitor, pending predictions,
 * counters, source positions — it records which build wrote it, the fingerprint of the configuration
 * it was run with (a resumed run must use the same), and when it was written.
 *
 * @example
 * const checkpoint = runCheckpoint(session.snapshot(), { shoal: '0.1.0', fingerprint, createdAt });
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

export interface RunState<Session extends Snapshot = Snapshot> extends CheckpointMeta {
  readonly session: Session;
}

export interface RunCheckpoint<Session extends Snapshot = Snapshot> extends Snapshot<RunState<Session>> {
  readonly kind: typeof CHECKPOINT_KIND;
}

/** Wrap a session's snapshot in the run checkpoint envelope. */
export function runCheckpoint<S extends Snapshot>(session: S, meta: CheckpointMeta): RunCheckpoint<S> {
  return {
    kind: CHECKPOINT_KIND,
    version: CHECKPOINT_VERSION,
    state: { shoal: meta.shoal, fingerprint: meta.fingerprint, createdAt: meta.createdAt, session },
  };
}
