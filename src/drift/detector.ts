import { ShoalError } from '../core/index.js';

/**
 * The one contract every drift detector keeps. A detector is fed one value at a time — a member's
 * 0/1 error, or any real value — and answers with a level. Work per value is constant on average and
 * allocates nothing.
 *
 * After answering `drift` a detector has already adapted as its paper prescribes (ADWIN has dropped the
 * stale part of its window; DDM, EDDM, Page-Hinkley and HDDM_A have restarted their statistics), so the
 * caller only acts on the answer.
 *
 * @example
 * const level = detector.update(prediction === label ? 0 : 1);
 * if (level === 'drift') replaceMember();
 */
export type DriftLevel = 'stable' | 'warning' | 'drift';

export interface DriftDetector {
  /** The detector's kind, as in configuration (`adwin`, `ddm`, …). */
  readonly kind: string;
  /** Feed one value; returns the level after it. */
  update(value: number): DriftLevel;
  /** The detector's current estimate of the monitored quantity (for example the error rate). */
  readonly estimate: number;
  /** Values seen since the last reset (or, for ADWIN, the current window width). */
  readonly count: number;
  /** Forget everything seen. */
  reset(): void;
  /** Everything needed to rebuild the detector exactly, JSON-safe. */
  snapshot(): DetectorSnapshot;
}

export interface DetectorSnapshot {
  readonly kind: string;
  readonly version: number;
  readonly options: Readonly<Record<string, unknown>>;
  readonly state: unknown;
}

/** Check that a snapshot is of the expected kind and version before restoring it. */
export function checkDetectorSnapshot(snapshot: DetectorSnapshot, kind: string, version: number): void {
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
