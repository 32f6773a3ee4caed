import { ShoalError } from './errors.js';

/**
 * Every snapshot in Shoal (learners, detectors, evaluators, ensembles) carries the kind that wrote it
 * and the format version of its state, checked before anything is restored.
 */
export interface VersionedSnapshot {
  readonly kind: string;
  readonly version: number;
}

/** Check that a snapshot is of the expected kind and version before restoring it. */
export function checkSnapshot(
  snapshot: VersionedSnapshot | null | undefined,
  kind: string,
  version: number,
): void {
  if (!snapshot || snapshot.kind !== kind) {
    throw new ShoalError('invalid-snapshot', `expected a ${kind} snapshot, got ${String(snapshot?.kind)}`);
  }
  if (snapshot.version !== version) {
    throw new ShoalError(
      'invalid-snapshot',
      `${kind} snapshot has format version ${String(snapshot.version)}; this build reads version ${version}`,
    );
  }
}
