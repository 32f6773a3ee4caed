import { ShoalError } from '../core/index.js';
import type { EnsembleSnapshot } from './ensemble.js';

/**
 * Per-row scratch of an ensemble: every member's class probabilities (member-major), predicted class
 * and vote weight. Allocated once and grown only when classes appear.
 */
export class MemberScratch {
  readonly members: number;
  classes = 0;
  probs = new Float64Array(0);
  readonly preds: Int32Array;
  readonly weights: Float64Array;

  constructor(members: number) {
    this.members = members;
    this.preds = new Int32Array(members);
    this.weights = new Float64Array(members);
  }

  fit(classes: number): void {
    this.classes = classes;
    this.probs = new Float64Array(this.members * classes);
  }
}

/** Check that an ensemble snapshot is of the expected kind and version before restoring it. */
export function checkSnapshotKind(snapshot: EnsembleSnapshot, kind: string, version: number): void {
  if (!snapshot || snapshot.kind !== kind) {
    throw new ShoalError(
      'invalid-snapshot',
      `expected a ${kind} ensemble snapshot, got ${String(snapshot?.kind)}`,
    );
  }
  if (snapshot.version !== version) {
    throw new ShoalError(
      'invalid-snapshot',
      `${kind} snapshot has format version ${String(snapshot.version)}; this build reads version ${version}`,
    );
  }
}
